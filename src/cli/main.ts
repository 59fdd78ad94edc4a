import type { CliCommand, CliIo } from './command';
import { UsageError } from './command';

/** Every command, in the order `--help` lists them. Add one import line per command file. */
async function loadCommands(): Promise<CliCommand[]> {
  const modules = await Promise.all([
    // commands: one line each, kept in this order
    import('./info'),
    import('./calibrate'),
    import('./batch'),
    import('./measure'),
    import('./sheets'),
    import('./xrd'),
    import('./match'),
  ] as Promise<{ command: CliCommand }>[]);
  return modules.map((m) => m.command);
}

/** Error classes only the JavaScript engine throws for a fault of the program. */
const ENGINE_ERRORS = new Set(['TypeError', 'ReferenceError', 'InternalError', 'EvalError']);

const nodeIo: CliIo = {
  out: (text) => process.stdout.write(text),
  err: (text) => process.stderr.write(text),
};

function helpText(commands: CliCommand[]): string {
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
  const commands = await loadCommands();
  const [name, ...rest] = argv;
  if (!name || name === '--help' || name === '-h' || name === 'help') {
    io.out(helpText(commands));
    return name ? 0 : 2;
  }
  if (name === '--version') {
    io.out('0.1.0\n');
    return 0;
  }
  const command = commands.find((c) => c.name === name);
  if (!command) {
    io.err(`stratameter: unknown command '${name}'. Run 'stratameter --help' for the list.\n`);
    return 2;
  }
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
