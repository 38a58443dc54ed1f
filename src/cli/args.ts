// Argument parsing shared by the commands (circuit loading: circuit-load.ts).

/** An error whose message is shown to the user as one line. */
export class CliError extends Error {
  override name = 'CliError';
}

export interface ParsedArgs {
  readonly positional: readonly string[];
  readonly options: ReadonlyMap<string, string | true>;
  /** Repeated options in order (e.g. --design A --design B). */
  readonly all: ReadonlyMap<string, readonly (string | true)[]>;
}

/** `--name value`, `--name=value` and bare `--flag` (for names in `flags`). */
export function parseArgs(argv: readonly string[], flags: readonly string[], valued: readonly string[]): ParsedArgs {
  const options = new Map<string, string | true>();
  const all = new Map<string, (string | true)[]>();
  const positional: string[] = [];
  const put = (k: string, v: string | true) => {
    options.set(k, v);
    all.set(k, [...(all.get(k) ?? []), v]);
  };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    if (!a.startsWith('--')) {
      positional.push(a);
      continue;
    }
    const eq = a.indexOf('=');
    const name = eq > 0 ? a.slice(2, eq) : a.slice(2);
    if (flags.includes(name)) {
      if (eq > 0) throw new CliError(`--${name} takes no value`);
      put(name, true);
    } else if (valued.includes(name)) {
      const v = eq > 0 ? a.slice(eq + 1) : argv[++i];
      if (v === undefined || (eq < 0 && v.startsWith('--'))) throw new CliError(`--${name} needs a value`);
      put(name, v);
    } else throw new CliError(`unknown option --${name}`);
  }
  return { positional, options, all };
}

export function optString(a: ParsedArgs, name: string): string | undefined {
  const v = a.options.get(name);
  return typeof v === 'string' ? v : undefined;
}

export function optNumber(a: ParsedArgs, name: string, def: number, check?: (x: number) => string | null): number {
  const v = optString(a, name);
  if (v === undefined) return def;
  const x = Number(v);
  if (!Number.isFinite(x)) throw new CliError(`--${name} must be a number (got "${v}")`);
  const problem = check?.(x);
  if (problem) throw new CliError(`--${name}: ${problem}`);
  return x;
}
