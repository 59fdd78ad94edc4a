/** The shape every command of the `stratameter` command line has. */
export interface CliIo {
  /** Writes to standard output (results). */
  out(text: string): void;
  /** Writes to standard error (progress, warnings, errors). */
  err(text: string): void;
}

export interface CliCommand {
  /** The word typed after `stratameter`. */
  name: string;
  /** One line for `stratameter --help`. */
  summary: string;
  /** Full usage text for `stratameter NAME --help`. */
  usage: string;
  /** Runs the command; resolves to the process exit code. */
  run(args: string[], io: CliIo): Promise<number>;
}

/** An error whose message is meant for the user as it stands (no stack trace is printed). */
export class UsageError extends Error {
  override name = 'UsageError';
}

/**
 * Splits `--flag value`, `--flag=value` and boolean `--flag` options from positional arguments.
 * `booleans` names the flags that take no value. Unknown flags are rejected.
 */
export function parseArgs(
  args: string[],
  spec: { values?: string[]; booleans?: string[] },
): { positional: string[]; options: Map<string, string>; flags: Set<string> } {
  const values = new Set(spec.values ?? []);
  const booleans = new Set(spec.booleans ?? []);
  const positional: string[] = [];
  const options = new Map<string, string>();
  const flags = new Set<string>();
  for (let i = 0; i < args.length; i++) {
    const a = args[i];
    if (!a.startsWith('--') || a === '--') {
      positional.push(a);
      continue;
    }
    const eq = a.indexOf('=');
    const name = eq > 0 ? a.slice(2, eq) : a.slice(2);
    if (booleans.has(name)) {
      if (eq > 0) throw new UsageError(`option --${name} takes no value`);
      flags.add(name);
    } else if (values.has(name)) {
      const value = eq > 0 ? a.slice(eq + 1) : args[++i];
      if (value === undefined) throw new UsageError(`option --${name} needs a value`);
      options.set(name, value);
    } else {
      throw new UsageError(`unknown option --${name}`);
    }
  }
  return { positional, options, flags };
}

/**
 * The coverage factor k from `--coverage-factor` (default 2).
 * @param text the option's value, or undefined when not given
 * @returns k, a positive number
 * @throws UsageError naming the option when the value is not a positive number
 */
export function coverageFactorOption(text: string | undefined): number {
  if (text === undefined) return 2;
  const k = Number(text);
  if (!Number.isFinite(k) || k <= 0) throw new UsageError(`--coverage-factor must be a positive number (k of U = k·u), got '${text}'`);
  return k;
}
