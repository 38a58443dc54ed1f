// One loader for every command that works on a circuit: --design FILE|TEMPLATE or --netlist FILE,
// then every --set PART.FIELD=VALUE, then (for a design with a power-supply section) the supply
// estimate as the model's B+. A netlist becomes a design (netlistToDesign), saying what is lost.
import { readFile } from 'node:fs/promises';
import { DesignError, designCircuit, designToNetlist, validateDesign, SUPPLY_ID, LOAD_ID, type Design, type Part, type Taper } from '../dsp/circuit/design.ts';
import { parseNetlist, NetlistError, type Netlist, type NetElement } from '../dsp/circuit/netlist.ts';
import { netlistToDesign } from '../dsp/circuit/netlist-design.ts';
import type { EngineCircuit } from '../dsp/circuit/engine.ts';
import { TEMPLATES } from '../dsp/circuit/templates.ts';
import { designSupply, type DesignSupply } from '../dsp/analysis/design-supply.ts';
import { parseValue, type ValueUnit } from '../dsp/parts/values.ts';
import { CliError, optString, type ParsedArgs } from './args.ts';

export interface CircuitSource {
  readonly label: string;
  /**
   * The design as given (netlist converted, --set applied), before the supply estimate; null
   * for a netlist that is no design (no single B+ source) when the command needs none.
   */
  readonly given: Design | null;
  /** The design the model runs: the supply section's estimate as B+ where there is one. */
  readonly design: Design | null;
  readonly circuit: EngineCircuit | Netlist;
  readonly netlist: Netlist;
  readonly fromNetlist: boolean;
  /** What a netlist lacks that a design has (empty for a design). */
  readonly lost: readonly string[];
  readonly supply: DesignSupply | null;
  /** One line per --set applied. */
  readonly sets: readonly string[];
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

/** A template name or a design JSON file; `wiring: false` leaves wiring faults for the check to report. */
export async function readDesign(ref: string, wiring: boolean): Promise<Design> {
  const t = TEMPLATES[ref];
  if (t) return t;
  if (!ref.endsWith('.json') && !ref.includes('/') && !ref.includes('\\')) {
    throw new CliError(`unknown template "${ref}" (templates: ${Object.keys(TEMPLATES).join(', ')}; or give a design .json file)`);
  }
  const doc = await readJson(ref, 'design');
  try {
    return validateDesign(doc, { wiring });
  } catch (e) {
    if (e instanceof DesignError) throw new CliError(`invalid design ${ref}: ${e.message}`);
    throw e;
  }
}

export async function readNetlist(path: string): Promise<Netlist> {
  const doc = await readJson(path, 'netlist');
  try {
    return parseNetlist(doc);
  } catch (e) {
    if (e instanceof NetlistError) throw new CliError(`invalid netlist ${path}: ${e.message}`);
    throw e;
  }
}

/** One --set: the part id (may itself contain dots, e.g. "B+"), the field and the text value. */
export interface SetSpec {
  readonly part: string;
  readonly field: string;
  readonly text: string;
}

export function parseSetArg(raw: string): SetSpec {
  const eq = raw.indexOf('=');
  const key = eq > 0 ? raw.slice(0, eq) : '';
  const dot = key.lastIndexOf('.');
  if (eq <= 0 || dot <= 0 || dot === key.length - 1 || eq === raw.length - 1)
    throw new CliError(`--set needs PART.FIELD=VALUE (e.g. VOL.position=0.8 or R3.ohms=220k), got "${raw}"`);
  return { part: key.slice(0, dot), field: key.slice(dot + 1), text: raw.slice(eq + 1) };
}

const FIELD_UNITS: Readonly<Record<string, Readonly<Record<string, ValueUnit | 'fraction' | 'factor' | 'bool' | 'taper' | 'tube-type' | 'signed-volts'>>>> = {
  resistor: { ohms: 'ohms', tolerance: 'fraction', ratedWatts: 'watts' },
  capacitor: { farads: 'farads', tolerance: 'fraction', ratedVolts: 'volts' },
  pot: { ohms: 'ohms', position: 'fraction', taper: 'taper', tolerance: 'fraction', ratedWatts: 'watts' },
  switch: { closed: 'bool', contactOhms: 'ohms' },
  tube: { sample: 'factor', type: 'tube-type', heaterVolts: 'signed-volts' },
  supply: { volts: 'volts', ohms: 'ohms', filterFarads: 'farads' },
  load: { ohms: 'ohms' },
  input: { ohms: 'ohms' },
};

function parseField(spec: SetSpec, kind: string): number | string | boolean {
  const fields = FIELD_UNITS[kind]!;
  const unit = fields[spec.field];
  const what = `--set ${spec.part}.${spec.field}`;
  if (!unit) throw new CliError(`${what}: a ${kind} has no field "${spec.field}" (fields: ${Object.keys(fields).join(', ')})`);
  const t = spec.text.trim();
  switch (unit) {
    case 'bool':
      if (/^(true|on|closed|1)$/i.test(t)) return true;
      if (/^(false|off|open|0)$/i.test(t)) return false;
      throw new CliError(`${what}: must be true or false (got "${t}")`);
    case 'taper':
      if (t === 'linear' || t === 'log' || t === 'reverse-log') return t;
      throw new CliError(`${what}: must be linear, log or reverse-log (got "${t}")`);
    case 'tube-type':
      return t;
    case 'fraction':
    case 'factor': {
      const pct = t.endsWith('%');
      const x = Number(pct ? t.slice(0, -1) : t);
      if (t === '' || !Number.isFinite(x)) throw new CliError(`${what}: "${t}" is not a number`);
      return pct ? x / 100 : x;
    }
    case 'signed-volts': {
      const r = parseValue(t, 'volts', { allowNegative: true, allowZero: true });
      if (!r.ok) throw new CliError(`${what}: ${r.reason}`);
      return r.value;
    }
    default: {
      const r = parseValue(t, unit, { allowZero: spec.field === 'ohms' && kind === 'input' });
      if (!r.ok) throw new CliError(`${what}: ${r.reason}`);
      return r.value;
    }
  }
}

/** Apply --set values to a design (validated afterwards by validateDesign, which names absurd values). */
export function applySetsToDesign(d: Design, sets: readonly SetSpec[]): Design {
  let out = d;
  for (const s of sets) {
    if (s.part === SUPPLY_ID) {
      out = { ...out, supply: { ...out.supply, [s.field]: parseField(s, 'supply') } };
      continue;
    }
    if (s.part === LOAD_ID) {
      parseField(s, 'load');
      out = { ...out, output: { ...out.output, loadOhms: parseField(s, 'load') as number } };
      continue;
    }
    if (s.part === 'input') {
      out = { ...out, input: { ...out.input, ohms: parseField(s, 'input') as number } };
      continue;
    }
    const p = out.parts.find((q) => q.id === s.part);
    if (!p)
      throw new CliError(
        `--set ${s.part}.${s.field}: no part "${s.part}" in ${out.name} (parts: ${out.parts.map((q) => q.id).join(', ')}; also ${SUPPLY_ID}, ${LOAD_ID}, input)`,
      );
    const v = parseField(s, p.kind);
    if (p.kind === 'pot' && s.field === 'position' && !(typeof v === 'number' && v >= 0 && v <= 1))
      throw new CliError(`--set ${s.part}.position: must be between 0 (end 1) and 1 (end 2), got ${String(v)}`);
    if (s.field === 'tolerance' && !(typeof v === 'number' && v >= 0 && v < 1))
      throw new CliError(`--set ${s.part}.tolerance: must be a fraction 0..1 (e.g. 0.05 or 5%), got ${String(v)}`);
    const next = { ...p, [s.field]: s.field === 'taper' ? (v as Taper) : v } as Part;
    out = { ...out, parts: out.parts.map((q) => (q.id === p.id ? next : q)) };
  }
  return out;
}

/** Apply --set values to a netlist's elements (ohms, farads, volts: the netlist's own fields). */
export function applySetsToNetlist(n: Netlist, sets: readonly SetSpec[]): Netlist {
  let elements: readonly NetElement[] = n.elements;
  for (const s of sets) {
    const e = elements.find((x) => x.id === s.part);
    if (!e) throw new CliError(`--set ${s.part}.${s.field}: no element "${s.part}" in the netlist (elements: ${elements.map((x) => x.id).join(', ')})`);
    const fields: Record<string, ValueUnit> =
      e.kind === 'resistor' ? { ohms: 'ohms' } : e.kind === 'capacitor' ? { farads: 'farads' } : e.kind === 'dc-source' ? { volts: 'volts', ohms: 'ohms' } : {};
    const unit = fields[s.field];
    if (!unit)
      throw new CliError(
        `--set ${s.part}.${s.field}: a netlist ${e.kind} has no settable field "${s.field}"${Object.keys(fields).length ? ` (fields: ${Object.keys(fields).join(', ')})` : ' (a netlist has no pots: set the two halves X.1, X.2 by ohms)'}`,
      );
    const r = parseValue(s.text.trim(), unit, { allowZero: e.kind === 'dc-source' && s.field === 'ohms' });
    if (!r.ok) throw new CliError(`--set ${s.part}.${s.field}: ${r.reason}`);
    elements = elements.map((x) => (x === e ? ({ ...x, [s.field]: r.value } as NetElement) : x));
  }
  return { ...n, elements };
}

/** The option names the loader reads (add them to a command's valued options). */
export const CIRCUIT_OPTIONS = ['design', 'netlist', 'set'] as const;

export function setSpecs(a: ParsedArgs): SetSpec[] {
  return (a.all.get('set') ?? []).map((v) => {
    if (typeof v !== 'string') throw new CliError('--set needs PART.FIELD=VALUE');
    return parseSetArg(v);
  });
}

/**
 * --design X or --netlist X (exactly one), --set applied, the supply estimate as B+.
 * `wiring: true` refuses wiring faults (render, op); false loads them for the check to report.
 */
export async function loadCircuitSource(
  a: ParsedArgs,
  options: { readonly wiring: boolean; readonly usage?: string; readonly needDesign?: boolean },
): Promise<CircuitSource> {
  const d = optString(a, 'design');
  const n = optString(a, 'netlist');
  if (d && n) throw new CliError('give --design or --netlist, not both');
  const sets = setSpecs(a);
  const setLines = sets.map((s) => `${s.part}.${s.field} = ${s.text}`);
  if (d) {
    const raw = await readDesign(d, options.wiring);
    let given = raw;
    if (sets.length > 0) {
      try {
        given = validateDesign(applySetsToDesign(raw, sets), { wiring: options.wiring });
      } catch (e) {
        if (e instanceof DesignError) throw new CliError(`--set: ${e.message}`);
        throw e;
      }
    }
    const supply = given.powerSupply ? supplyOf(given) : null;
    const design = supply ? supply.design : given;
    return {
      label: given.name,
      given,
      design,
      circuit: designCircuit(design),
      netlist: designToNetlist(design),
      fromNetlist: false,
      lost: [],
      supply,
      sets: setLines,
    };
  }
  if (n) {
    const netlist = applySetsToNetlist(await readNetlist(n), sets);
    let conv;
    try {
      conv = netlistToDesign(netlist, n);
    } catch (e) {
      if (options.needDesign) throw new CliError(`netlist ${n}: ${(e as Error).message}`);
      return {
        label: n,
        given: null,
        design: null,
        circuit: netlist,
        netlist,
        fromNetlist: true,
        lost: [`analyses that need a design: ${(e as Error).message}`],
        supply: null,
        sets: setLines,
      };
    }
    let design = conv.design;
    try {
      design = validateDesign(design, { wiring: options.wiring });
    } catch (e) {
      if (e instanceof DesignError) throw new CliError(`netlist ${n}: ${e.message}`);
      throw e;
    }
    // the netlist itself is the circuit (exact equations); the design stands for it in analyses
    return { label: n, given: design, design, circuit: netlist, netlist, fromNetlist: true, lost: conv.lost, supply: null, sets: setLines };
  }
  throw new CliError(`missing --design FILE|TEMPLATE or --netlist FILE${options.usage ? ` (${options.usage})` : ''}`);
}

function supplyOf(d: Design): DesignSupply {
  try {
    return designSupply(d);
  } catch (e) {
    throw new CliError(`power-supply section of ${d.name}: ${(e as Error).message}`);
  }
}

/** Lines to print (stderr) about what a netlist lacks and what --set changed. */
export function sourceNotes(s: CircuitSource): string[] {
  const out: string[] = [];
  if (s.fromNetlist) for (const l of s.lost) out.push(`note: from a netlist: ${l}`);
  if (s.sets.length > 0) out.push(`note: set ${s.sets.join(', ')}`);
  if (s.supply && s.sets.some((l) => l.startsWith(`${SUPPLY_ID}.`)))
    out.push(`note: the design has a power-supply section, so its estimate replaces the --set ${SUPPLY_ID} values`);
  if (s.supply)
    out.push(
      `note: B+ from the power-supply section: ${s.supply.design.supply.volts.toFixed(1)} V behind ${s.supply.design.supply.ohms.toFixed(0)} ohms (${s.supply.loadedVolts.toFixed(1)} V loaded at node ${s.supply.design.supply.node})`,
    );
  return out;
}

/**
 * Several designs by reference (pair): each with the --set values whose part it has (a --set
 * that no design has is an error), and its supply section's estimate as B+.
 */
export async function loadModelDesigns(refs: readonly string[], sets: readonly SetSpec[]): Promise<Design[]> {
  const raws = await Promise.all(refs.map((r) => readDesign(r, true)));
  const special = new Set([SUPPLY_ID, LOAD_ID, 'input']);
  for (const s of sets) {
    if (!special.has(s.part) && !raws.some((d) => d.parts.some((p) => p.id === s.part)))
      throw new CliError(`--set ${s.part}.${s.field}: no design given has a part "${s.part}"`);
  }
  return raws.map((d) => {
    const mine = sets.filter((s) => special.has(s.part) || d.parts.some((p) => p.id === s.part));
    let given = d;
    if (mine.length > 0) {
      try {
        given = validateDesign(applySetsToDesign(d, mine));
      } catch (e) {
        if (e instanceof DesignError) throw new CliError(`--set on ${d.name}: ${e.message}`);
        throw e;
      }
    }
    return given.powerSupply ? supplyOf(given).design : given;
  });
}

/** The design a checking command needs (check, parts, spread, supply): a netlist has been converted. */
export async function loadDesignSource(
  a: ParsedArgs,
  options: { readonly wiring: boolean; readonly usage?: string },
): Promise<CircuitSource & { readonly given: Design; readonly design: Design }> {
  const s = await loadCircuitSource(a, { ...options, needDesign: true });
  if (!s.given || !s.design) throw new CliError('this command needs a design');
  return { ...s, given: s.given, design: s.design };
}
