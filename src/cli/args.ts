// Argument parsing and design loading shared by the commands.
import { readFile } from 'node:fs/promises';
import { designCircuit, designToNetlist, validateDesign, DesignError, type Design } from '../dsp/circuit/design.ts';
import { parseNetlist, NetlistError, type Netlist } from '../dsp/circuit/netlist.ts';
import type { EngineCircuit } from '../dsp/circuit/engine.ts';
import { TEMPLATES } from '../dsp/circuit/templates.ts';

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
    if (!a.startsWith('--')) { positional.push(a); continue; }
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

async function readJson(path: string, what: string): Promise<unknown> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (e) {
    throw new CliError(`cannot read ${what} ${path} (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
  try {
    return JSON.parse(text);
  } catch (e) {
    throw new CliError(`${what} ${path} is not valid JSON: ${(e as Error).message}`);
  }
}

/** A template name or a design JSON file. */
export async function loadDesign(ref: string): Promise<Design> {
  const t = TEMPLATES[ref];
  if (t) return t;
  if (!ref.endsWith('.json') && !ref.includes('/') && !ref.includes('\\')) {
    throw new CliError(`unknown template "${ref}" (templates: ${Object.keys(TEMPLATES).join(', ')}; or give a design .json file)`);
  }
  const doc = await readJson(ref, 'design');
  try {
    return validateDesign(doc);
  } catch (e) {
    if (e instanceof DesignError) throw new CliError(`invalid design ${ref}: ${e.message}`);
    throw e;
  }
}

export async function loadNetlist(path: string): Promise<Netlist> {
  const doc = await readJson(path, 'netlist');
  try {
    return parseNetlist(doc);
  } catch (e) {
    if (e instanceof NetlistError) throw new CliError(`invalid netlist ${path}: ${e.message}`);
    throw e;
  }
}

export interface LoadedCircuit {
  readonly label: string;
  readonly circuit: EngineCircuit | Netlist;
  readonly netlist: Netlist;
  readonly design?: Design;
}

/** --design X or --netlist X, exactly one. */
export async function loadCircuitArg(a: ParsedArgs): Promise<LoadedCircuit> {
  const d = optString(a, 'design');
  const n = optString(a, 'netlist');
  if (d && n) throw new CliError('give --design or --netlist, not both');
  if (d) {
    const design = await loadDesign(d);
    return { label: design.name, circuit: designCircuit(design), netlist: designToNetlist(design), design };
  }
  if (n) {
    const netlist = await loadNetlist(n);
    return { label: n, circuit: netlist, netlist };
  }
  throw new CliError('missing --design FILE|TEMPLATE or --netlist FILE');
}
