// A netlist as a design: netlists and designs are both circuits, so every analysis that works on a
// design (check, ratings, parts, spread, ac, the workspace) takes a netlist through this. A
// netlist carries less than a design; `lost` says what, in words a builder can act on.
import { TUBE_LIBRARY, type TubeType } from '../tubes/library.ts';
import { DESIGN_SCHEMA, INTERELECTRODE_SUFFIXES, LOAD_ID, SUPPLY_FILTER_ID, type Design, type Part, type TubePart } from './design.ts';
import type { NetCapacitor, NetElement, Netlist, NetResistor, NetTube } from './netlist.ts';

export interface NetlistAsDesign {
  readonly design: Design;
  /** What the netlist does not say and the design had to assume (one line each). */
  readonly lost: readonly string[];
}

/** Output load assumed when a netlist has none: 1 G (practically open). */
export const OPEN_LOAD_OHMS = 1e9;

const close = (a: number, b: number) => Math.abs(a - b) <= 1e-9 * Math.max(Math.abs(a), Math.abs(b), 1e-300);

/** Two grid laws with the same name and the same parameters. */
function sameLaw(a: object, b: object): boolean {
  const ea = Object.entries(a),
    rb = b as Record<string, unknown>;
  if (ea.length !== Object.keys(b).length) return false;
  return ea.every(([k, v]) => (typeof v === 'number' && typeof rb[k] === 'number' ? close(v, rb[k]) : v === rb[k]));
}

/** The library type (and sample factor) whose equations a netlist tube uses, or null. */
export function matchLibraryTube(t: NetTube): { type: TubeType; sample: number } | null {
  for (const lib of Object.values(TUBE_LIBRARY)) {
    if (lib.kind !== t.kind) continue;
    const m = t.model,
      l = lib.model;
    if (!close(m.mu, l.mu) || !close(m.ex, l.ex) || !close(m.kp, l.kp) || !close(m.kvb, l.kvb)) continue;
    const sample = l.kg1 / m.kg1;
    if (t.kind === 'pentode' && lib.kind === 'pentode' && !close(lib.model.kg2 / t.model.kg2, sample)) continue;
    if (t.gridCurrent && !sameLaw(t.gridCurrent, lib.gridCurrent)) continue;
    return { type: lib, sample };
  }
  return null;
}

function nearestLibraryTube(t: NetTube): TubeType {
  let best: TubeType | null = null;
  for (const lib of Object.values(TUBE_LIBRARY)) {
    if (lib.kind !== t.kind) continue;
    if (!best || Math.abs(Math.log(lib.model.mu / t.model.mu)) < Math.abs(Math.log(best.model.mu / t.model.mu))) best = lib;
  }
  if (!best) throw new RangeError(`no ${t.kind} in the tube library`);
  return best;
}

/**
 * Turn a parsed netlist into a design. Throws RangeError (one clear line) when the netlist cannot
 * be a design: the design model has exactly one B+ source from a node to ground.
 */
export function netlistToDesign(n: Netlist, name = 'netlist'): NetlistAsDesign {
  const lost: string[] = ['labels, tolerances and part ratings: a netlist has none (tolerances default as for a design; ratings to buy are still worked out)'];
  if (n.ground !== '0') throw new RangeError(`netlist ground is "${n.ground}": a design's ground is "0"; rename the ground node`);
  const sources = n.elements.filter((e) => e.kind === 'dc-source');
  if (sources.length === 0) throw new RangeError('netlist has no dc-source: a design needs one B+ supply from a node to ground');
  if (sources.length > 1)
    throw new RangeError(
      `netlist has ${sources.length} dc-sources (${sources.map((s) => s.id).join(', ')}): a design has one B+ supply; feed the other nodes from it through resistors`,
    );
  const src = sources[0]!;
  const supplyNode = src.nodes[1] === '0' ? src.nodes[0] : src.nodes[0] === '0' ? src.nodes[1] : null;
  if (supplyNode === null)
    throw new RangeError(`dc-source ${src.id} sits between "${src.nodes[0]}" and "${src.nodes[1]}": a design's B+ is from a node to ground`);
  const volts = src.nodes[1] === '0' ? src.volts : -src.volts;
  if (!(volts > 0)) throw new RangeError(`dc-source ${src.id} gives ${volts} V: a design's B+ is positive`);

  const used = new Set<string>([src.id]);
  const byId = new Map(n.elements.map((e) => [e.id, e]));
  const isCap = (e: NetElement | undefined): e is NetCapacitor => e?.kind === 'capacitor';
  const isRes = (e: NetElement | undefined): e is NetResistor => e?.kind === 'resistor';
  const onNodes = (e: NetCapacitor | NetResistor, a: string, b: string) => (e.nodes[0] === a && e.nodes[1] === b) || (e.nodes[0] === b && e.nodes[1] === a);

  const filter = byId.get(SUPPLY_FILTER_ID);
  let filterFarads = 0;
  if (isCap(filter) && onNodes(filter, supplyNode, '0')) {
    filterFarads = filter.farads;
    used.add(filter.id);
  }
  const load = byId.get(LOAD_ID);
  let loadOhms = OPEN_LOAD_OHMS;
  if (isRes(load) && onNodes(load, n.output.node, '0')) {
    loadOhms = load.ohms;
    used.add(load.id);
  } else lost.push(`output load: the netlist has no "${LOAD_ID}" resistor from the output to ground; ${OPEN_LOAD_OHMS / 1e9} G (open) assumed`);

  const parts: Part[] = [];
  // pots: "X.1" [end1, wiper] and "X.2" [wiper, end2] (the form designToNetlist writes)
  let potCount = 0;
  for (const e of n.elements) {
    if (!isRes(e) || !e.id.endsWith('.1')) continue;
    const id = e.id.slice(0, -2),
      lower = byId.get(`${id}.2`);
    if (!isRes(lower) || byId.has(id)) continue;
    const wiper = e.nodes[1];
    if (lower.nodes[0] !== wiper) continue;
    const ohms = e.ohms + lower.ohms;
    parts.push({ id, kind: 'pot', nodes: [e.nodes[0], wiper, lower.nodes[1]], ohms, taper: 'linear', position: e.ohms / ohms });
    used.add(e.id);
    used.add(lower.id);
    potCount++;
  }
  if (potCount > 0)
    lost.push(`pot tapers: ${potCount} pot(s) rebuilt from their two halves as linear at the same division (a log pot keeps its present setting, not its law)`);

  const tubeIds = new Set(n.elements.filter((e) => e.kind === 'triode' || e.kind === 'pentode').map((e) => e.id));
  const unmatched: string[] = [];
  for (const e of n.elements) {
    if (e.kind !== 'triode' && e.kind !== 'pentode') continue;
    const m = matchLibraryTube(e);
    const type = m ? m.type : nearestLibraryTube(e);
    const sample = m ? m.sample : 1;
    if (!m) unmatched.push(`${e.id} (nearest: ${type.name})`);
    // interelectrode capacitances written by designToNetlist as "<id>.Cgp" etc.
    const own = INTERELECTRODE_SUFFIXES.map((s) => byId.get(e.id + s)).filter(isCap);
    const c = type.capacitance;
    const libValues = [c.gridPlateFarads, c.gridCathodeFarads, c.plateCathodeFarads];
    const matches =
      own.length > 0 &&
      own.every((cap) => close(cap.farads, libValues[INTERELECTRODE_SUFFIXES.indexOf(cap.id.slice(e.id.length) as (typeof INTERELECTRODE_SUFFIXES)[number])]!));
    if (matches) for (const cap of own) used.add(cap.id);
    const nodes =
      e.kind === 'pentode'
        ? { plate: e.nodes.plate, grid: e.nodes.grid, cathode: e.nodes.cathode, screen: e.nodes.screen }
        : { plate: e.nodes.plate, grid: e.nodes.grid, cathode: e.nodes.cathode };
    const tube: TubePart = {
      id: e.id,
      kind: 'tube',
      type: type.name,
      sample: Math.min(4.9, Math.max(0.21, sample)),
      nodes,
      ...(matches ? {} : { interelectrode: false }),
    };
    parts.push(tube);
    used.add(e.id);
  }
  if (unmatched.length > 0)
    lost.push(`tube models: ${unmatched.join(', ')} use parameters of no library type; the design uses the nearest library type's equations and ratings`);
  if (tubeIds.size > 0) lost.push('heater elevation: a netlist has none; heaters are taken as at ground (0 V)');

  for (const e of n.elements) {
    if (used.has(e.id)) continue;
    if (e.kind === 'resistor') parts.push({ id: e.id, kind: 'resistor', nodes: e.nodes, ohms: e.ohms });
    else if (e.kind === 'capacitor') parts.push({ id: e.id, kind: 'capacitor', nodes: e.nodes, farads: e.farads });
  }
  if (parts.some((p) => p.kind === 'capacitor' && p.farads >= 1e-6))
    lost.push('electrolytic polarity: a netlist does not say which capacitors are polarised or which lead is +, so reversed electrolytics cannot be found');
  const design: Design = {
    schema: DESIGN_SCHEMA,
    name,
    input: { node: n.input.node, ohms: n.input.ohms },
    output: { node: n.output.node, loadOhms },
    supply: { node: supplyNode, volts, ohms: src.ohms, filterFarads },
    parts,
  };
  return { design, lost };
}
