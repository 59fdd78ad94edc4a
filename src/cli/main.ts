import type { CliCommand, CliIo } from './command';
import { UsageError } from './command';
import { PROGRAM_VERSION } from './version';

/** One command of the table: its name and summary for `--help`, and how to load it. */
export interface CommandEntry {
  name: string;
  /** One line for `stratameter --help`; the same text as the module's `command.summary` (a test keeps them equal). */
  summary: string;
  /** Loads the command's module: only the command that runs is loaded, with only what it imports. */
  load(): Promise<{ command: CliCommand }>;
}

/**
 * Every command, in the order `--help` lists them: one entry per command file. The summaries
 * live here too, so that `--help` loads no command module at all (start-up stays at Node's own).
 */
export const COMMANDS: readonly CommandEntry[] = [
  { name: 'info', summary: 'size, pixel type, value range and metadata calibration of an image file', load: () => import('./info') },
  { name: 'calibrate', summary: 'pixel size from metadata, a burned-in scale bar (read offline) or a lattice standard', load: () => import('./calibrate') },
  { name: 'batch', summary: 'run a recipe on every image of a folder (resumable, parallel, sharded); CSV, JSON, figures', load: () => import('./batch') },
  { name: 'merge', summary: 'combine the partial results of a sharded batch into the exports of a single run', load: () => import('./merge') },
  { name: 'measure', summary: 'periods (d-spacings) and directions in an image region, from its power spectrum', load: () => import('./measure') },
  { name: 'sheets', summary: 'stack thickness and layer counts, along a line or found automatically', load: () => import('./sheets') },
  { name: 'xrd', summary: 'peaks, d-spacings, crystallite sizes and series of a powder XRD or SAXS pattern', load: () => import('./xrd') },
  { name: 'saed', summary: 'electron diffraction: camera constant from a ring standard; ring and spot d-spacings', load: () => import('./saed') },
  { name: 'reconcile', summary: 'reconcile micrograph periods and sheets with a diffraction pattern', load: () => import('./reconcile') },
  { name: 'reflections', summary: "list a structure file's reflections: hkl, d, 2θ at a wavelength, relative intensity", load: () => import('./reflections') },
  { name: 'zone', summary: 'index spots of a power spectrum or electron diffraction pattern with a structure: hkl and zone axis', load: () => import('./zone') },
];

/** Former command names, accepted with a one-line note (not listed by --help). */
const ALIASES: Record<string, string> = { match: 'reconcile' };

/** Error classes only the JavaScript engine throws for a fault of the program. */
const ENGINE_ERRORS = new Set(['TypeError', 'ReferenceError', 'InternalError', 'EvalError']);

const nodeIo: CliIo = {
  out: (text) => process.stdout.write(text),
  err: (text) => process.stderr.write(text),
};

function helpText(commands: readonly CommandEntry[]): string {
  const width = Math.max(8, ...commands.map((c) => c.name.length));
  const lines = commands.map((c) => `  ${c.name.padEnd(width)}  ${c.summary}`);
  return [
    'stratameter: periods, sheet thickness and diffraction cross-checks for micrographs of layered materials',
    '',
    'Usage: stratameter COMMAND [options]    (stratameter COMMAND --help for its options)',
    '',
    'Commands:',
    ...lines,
    '',
  ].join('\n');
}

/** Runs the command line on `argv` (without node and the script); resolves to the exit code. */
export async function main(argv: string[], io: CliIo = nodeIo): Promise<number> {
  const [name, ...rest] = argv;
  if (!name || name === '--help' || name === '-h' || name === 'help') {
    io.out(helpText(COMMANDS));
    return name ? 0 : 2;
  }
  if (name === '--version') {
    io.out(`${PROGRAM_VERSION}\n`);
    return 0;
  }
  const alias = ALIASES[name];
  if (alias) io.err(`stratameter: '${name}' is now '${alias}'; the old name will go away\n`);
  const entry = COMMANDS.find((c) => c.name === (alias ?? name));
  if (!entry) {
    io.err(`stratameter: unknown command '${name}'. Run 'stratameter --help' for the list.\n`);
    return 2;
  }
  const { command } = await entry.load();
  if (rest.includes('--help') || rest.includes('-h')) {
    io.out(command.usage.endsWith('\n') ? command.usage : `${command.usage}\n`);
    return 0;
  }
  try {
    return await command.run(rest, io);
  } catch (e) {
    const message = e instanceof Error ? e.message : String(e);
    // Errors are written for the user (the readers' name the file); a JavaScript engine's own
    // error is a fault of the program and is said to be one (never the engine's message alone).
    const own = !(e instanceof Error) || !(ENGINE_ERRORS.has(e.name) || /Maximum call stack|memory access out of bounds|Cannot read propert|is not a function|Array buffer allocation failed/.test(e.message));
    io.err(own ? `stratameter ${name}: ${message}\n` : `stratameter ${name}: an internal error stopped the command (${e instanceof Error ? e.name : 'error'}: ${message}); please report it with the command line that caused it\n`);
    return e instanceof UsageError ? 2 : 1;
  }
}
