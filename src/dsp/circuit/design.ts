// A design is data: parts with values, a B+ supply, tubes from the library, the guitar input and
// the output load. It compiles to the engine's circuit and to the netlist interchange form.
import { registerUserTube, tubeType, type TubeType } from '../tubes/library.ts';
import { TubeFileError, userTubeType } from '../tubes/user-tube.ts';
import type { EngineCapacitor, EngineCircuit, EngineElement } from './engine.ts';
import { gridsWithoutDcPath } from './topology.ts';
import { NETLIST_SCHEMA, type NetElement, type Netlist, type NetTube } from './netlist.ts';
import type { RectifierSpec, SecondarySpec } from './supply-types.ts';

export const DESIGN_SCHEMA = 'valvewright.design.v1';

export type Taper = 'linear' | 'log' | 'reverse-log';

/** ratedWatts (optional): the power rating of the part you have or mean to buy; checked by the ratings sheet. */
export interface ResistorPart {
  readonly id: string;
  readonly kind: 'resistor';
  readonly nodes: readonly [string, string];
  readonly ohms: number;
  readonly tolerance?: number;
  readonly ratedWatts?: number;
  readonly label?: string;
}
/** Polarised: nodes[0] is the + lead. ratedVolts (optional): the voltage rating of the part; checked by the ratings sheet. */
export interface CapacitorPart {
  readonly id: string;
  readonly kind: 'capacitor';
  readonly nodes: readonly [string, string];
  readonly farads: number;
  readonly tolerance?: number;
  readonly polarized?: boolean;
  readonly ratedVolts?: number;
  readonly label?: string;
}
/** Three-terminal potentiometer: nodes [end1, wiper, end2]; position 0 puts the wiper at end1. */
export interface PotPart {
  readonly id: string;
  readonly kind: 'pot';
  readonly nodes: readonly [string, string, string];
  readonly ohms: number;
  readonly taper: Taper;
  readonly position: number;
  readonly tolerance?: number;
  readonly ratedWatts?: number;
  readonly label?: string;
}
export interface SwitchPart {
  readonly id: string;
  readonly kind: 'switch';
  readonly nodes: readonly [string, string];
  readonly closed: boolean;
  readonly contactOhms?: number;
  readonly label?: string;
}
export interface TubePart {
  readonly id: string;
  readonly kind: 'tube';
  readonly type: string;
  /** Plate-current scale standing for a strong (> 1) or weak (< 1) sample. */
  readonly sample: number;
  readonly nodes: { readonly plate: string; readonly grid: string; readonly cathode: string; readonly screen?: string };
  /** DC voltage of the heater winding relative to ground (heater elevation), volts. */
  readonly heaterVolts?: number;
  /**
   * Whether the model includes the tube's interelectrode capacitances (library.ts, data sheet),
   * as capacitors `<id>.Cgp`, `<id>.Cgk`, `<id>.Cpk`. Default true: they set the Miller
   * roll-off and the rise time of a clipping stage. false leaves them out.
   */
  readonly interelectrode?: boolean;
  readonly label?: string;
}
export type Part = ResistorPart | CapacitorPart | PotPart | SwitchPart | TubePart;

export interface Supply {
  readonly node: string;
  /** EMF, volts; ohms: source resistance; filterFarads: capacitor at the node (0: none). */
  readonly volts: number;
  readonly ohms: number;
  readonly filterFarads: number;
}

/**
 * Optional transformer-to-B+ data for the supply estimate (analysis/supply.ts): the last RC stage
 * (or the reservoir when there are none) is the design's supply node; its estimate replaces
 * supply.volts / ohms / filterFarads when the estimate feeds the model.
 */
export interface PowerSupplySection {
  readonly secondary: SecondarySpec;
  readonly rectifier: RectifierSpec;
  readonly mainsHertz: 50 | 60;
  readonly reservoirFarads: number;
  readonly reservoirRatedVolts?: number;
  readonly stages?: readonly { readonly droppingOhms: number; readonly farads: number; readonly ratedVolts?: number; readonly label?: string }[];
  readonly heaterWinding?: { readonly volts: number; readonly amps: number };
  /** Mains RMS volts at the primary (default 230 V at 50 Hz, 120 V at 60 Hz); sets the primary current and fuse. */
  readonly mainsVolts?: number;
}

export interface Design {
  readonly schema: typeof DESIGN_SCHEMA;
  readonly name: string;
  readonly description?: string;
  readonly input: { readonly node: string; readonly ohms: number };
  readonly output: { readonly node: string; readonly loadOhms: number };
  readonly supply: Supply;
  readonly parts: readonly Part[];
  readonly powerSupply?: PowerSupplySection;
  /** Where the user nudged parts on the schematic: offsets from the automatic layout, by part id (drawing only). */
  readonly sheet?: SheetPlacement;
  /**
   * User tube files (valvewright.tube.v1, from `tube fit --out`) this design's parts may name by
   * type: carried in the design so that it is self-contained (the audio thread, a saved file, a
   * shared link). Validating the design registers them (tubes/library.ts, registerUserTube).
   */
  readonly userTubes?: readonly unknown[];
}

export interface SheetPlacement {
  readonly positions?: Readonly<Record<string, readonly [number, number]>>;
}

export const GROUND = '0';
export const SUPPLY_ID = 'B+';
export const SUPPLY_FILTER_ID = 'B+.filter';
export const LOAD_ID = 'load';
const POT_END_OHMS = 1; // wiper-to-end residual resistance of a real pot (common practice)
const DEFAULT_CONTACT_OHMS = 0.05;

export class DesignError extends Error {
  override name = 'DesignError';
}

/** Fraction of the track between end1 and the wiper for a knob position 0..1. */
export function taperFraction(taper: Taper, position: number): number {
  const x = Math.min(1, Math.max(0, position));
  // Audio ("log") taper approximated by an exponential through 10 % at half rotation (common practice).
  const b = 81;
  switch (taper) {
    case 'linear':
      return x;
    case 'log':
      return (Math.pow(b, x) - 1) / (b - 1);
    case 'reverse-log':
      return 1 - (Math.pow(b, 1 - x) - 1) / (b - 1);
  }
}

/** The two resistors a pot stands for at its present setting. */
export function potResistors(p: PotPart): { upperOhms: number; lowerOhms: number } {
  const f = taperFraction(p.taper, p.position);
  return { upperOhms: Math.max(POT_END_OHMS, p.ohms * f), lowerOhms: Math.max(POT_END_OHMS, p.ohms * (1 - f)) };
}

export const potUpperId = (id: string) => `${id}.1`;
export const potLowerId = (id: string) => `${id}.2`;

function checkPositive(v: unknown, what: string, min: number, max: number, unit: string): void {
  if (typeof v !== 'number' || !Number.isFinite(v)) throw new DesignError(`${what} must be a number`);
  if (!(v > 0)) throw new DesignError(`${what} must be positive (got ${v} ${unit})`);
  if (v < min || v > max) throw new DesignError(`${what} = ${v} ${unit} is outside the sane range ${min}..${max} ${unit}`);
}

/**
 * Validate a design (object or parsed JSON). Throws DesignError with one clear line.
 * `wiring: false` skips the topology checks (single-terminal nodes, grids without a DC path) so
 * that the wiring check can report them as findings instead.
 */
export function validateDesign(doc: unknown, options: { readonly wiring?: boolean } = {}): Design {
  if (typeof doc !== 'object' || doc === null) throw new DesignError('design must be a JSON object');
  const d = doc as Partial<Design>;
  if (d.schema !== DESIGN_SCHEMA) throw new DesignError(`design "schema" must be "${DESIGN_SCHEMA}"`);
  if (typeof d.name !== 'string' || !d.name.trim()) throw new DesignError('design needs a "name"');
  if (!d.input || typeof d.input.node !== 'string') throw new DesignError('design needs "input": { "node", "ohms" }');
  if (!(d.input.ohms >= 0)) throw new DesignError('input ohms must be zero or positive');
  if (!d.output || typeof d.output.node !== 'string') throw new DesignError('design needs "output": { "node", "loadOhms" }');
  checkPositive(d.output.loadOhms, 'output loadOhms', 1, 1e9, 'ohms');
  if (!d.supply || typeof d.supply.node !== 'string') throw new DesignError('design needs "supply": { "node", "volts", "ohms", "filterFarads" }');
  checkPositive(d.supply.volts, 'supply volts', 1, 1000, 'V');
  if (!(d.supply.ohms >= 0 && d.supply.ohms < 1e6)) throw new DesignError('supply ohms must be between 0 and 1 M');
  // 0 = no filter capacitor (a netlist's ideal or resistive source); otherwise a real capacitor
  if (d.supply.filterFarads !== 0) checkPositive(d.supply.filterFarads, 'supply filterFarads', 1e-9, 1, 'F');
  if (!Array.isArray(d.parts) || d.parts.length === 0) throw new DesignError('design "parts" must be a non-empty list');
  if (d.userTubes !== undefined) {
    if (!Array.isArray(d.userTubes)) throw new DesignError('design "userTubes" must be a list of user tube files');
    d.userTubes.forEach((u, i) => {
      try {
        registerUserTube(userTubeType(u, `userTubes[${i}]`));
      } catch (e) {
        throw new DesignError(e instanceof TubeFileError ? e.message : `userTubes[${i}]: ${(e as Error).message}`);
      }
    });
  }
  const ids = new Set<string>([SUPPLY_ID, SUPPLY_FILTER_ID, LOAD_ID]);
  const nodes = new Set<string>([GROUND, d.supply.node, d.input.node]);
  for (const p of d.parts as Part[]) {
    if (!p || typeof p.id !== 'string' || !p.id) throw new DesignError('every part needs an "id"');
    if (ids.has(p.id)) throw new DesignError(`part id "${p.id}" is used twice (or reserved)`);
    ids.add(p.id);
    const where = `part ${p.id}`;
    const nodeList = p.kind === 'tube' ? Object.values(p.nodes ?? {}) : (p.nodes as readonly string[] | undefined);
    if (!Array.isArray(nodeList) || nodeList.some((n) => typeof n !== 'string' || !n)) throw new DesignError(`${where}: nodes must be node names`);
    switch (p.kind) {
      case 'resistor':
        checkPositive(p.ohms, `${where} ohms`, 0.01, 1e12, 'ohms');
        if (p.ratedWatts !== undefined) checkPositive(p.ratedWatts, `${where} ratedWatts`, 0.01, 1000, 'W');
        break;
      case 'capacitor':
        checkPositive(p.farads, `${where} farads`, 1e-15, 10, 'F');
        if (p.ratedVolts !== undefined) checkPositive(p.ratedVolts, `${where} ratedVolts`, 1, 100000, 'V');
        break;
      case 'pot':
        checkPositive(p.ohms, `${where} ohms`, 10, 1e8, 'ohms');
        if (!(p.position >= 0 && p.position <= 1)) throw new DesignError(`${where}: position must be between 0 and 1`);
        if (!['linear', 'log', 'reverse-log'].includes(p.taper)) throw new DesignError(`${where}: taper must be linear, log or reverse-log`);
        break;
      case 'switch':
        if (typeof p.closed !== 'boolean') throw new DesignError(`${where}: "closed" must be true or false`);
        if (p.contactOhms !== undefined) checkPositive(p.contactOhms, `${where} contactOhms`, 1e-4, 100, 'ohms');
        break;
      case 'tube': {
        let t: TubeType;
        try {
          t = tubeType(p.type);
        } catch (err) {
          throw new DesignError(`${where}: ${(err as Error).message}`);
        }
        if (!(p.sample > 0.2 && p.sample < 5)) throw new DesignError(`${where}: sample factor must be between 0.2 and 5`);
        if (t.kind === 'pentode' && !p.nodes.screen) throw new DesignError(`${where}: a ${t.name} pentode needs a screen node`);
        if (t.kind === 'triode' && p.nodes.screen) throw new DesignError(`${where}: a ${t.name} triode has no screen`);
        if (p.interelectrode !== undefined && typeof p.interelectrode !== 'boolean') throw new DesignError(`${where}: "interelectrode" must be true or false`);
        break;
      }
      default:
        throw new DesignError(`${where}: unknown kind ${JSON.stringify((p as { kind: unknown }).kind)}`);
    }
    const distinct =
      p.kind === 'pot'
        ? new Set([p.nodes[0], p.nodes[1]]).size === 2 && p.nodes[0] !== p.nodes[2]
        : p.kind === 'tube' || new Set(nodeList).size === nodeList.length;
    if (!distinct)
      throw new DesignError(
        `${where}: two terminals on the same node${p.kind === 'pot' ? ' (a pot may tie its wiper to end 2 as a variable resistor, nothing else)' : ''}`,
      );
    for (const n of nodeList) nodes.add(n);
  }
  if (!nodes.has(d.output.node)) throw new DesignError(`output node "${d.output.node}" is not connected to any part`);
  if (d.powerSupply !== undefined && (typeof d.powerSupply !== 'object' || d.powerSupply === null || typeof d.powerSupply.secondary !== 'object')) {
    throw new DesignError('design "powerSupply" must be an object with "secondary", "rectifier", "mainsHertz" and "reservoirFarads"');
  }
  if (d.sheet !== undefined) {
    const pos = typeof d.sheet === 'object' && d.sheet !== null ? d.sheet.positions : null;
    const good =
      pos === undefined ||
      (typeof pos === 'object' &&
        pos !== null &&
        Object.values(pos).every((v) => Array.isArray(v) && v.length === 2 && v.every((x) => typeof x === 'number' && Number.isFinite(x))));
    if (!good) throw new DesignError('design "sheet" must be { "positions": { PART: [x, y] } } with finite numbers');
  }
  const design = doc as Design;
  if (options.wiring === false) return design;
  // Every node needs at least two connections (the supply, input and load count).
  const uses = new Map<string, number>();
  const bump = (n: string) => uses.set(n, (uses.get(n) ?? 0) + 1);
  bump(d.supply.node);
  bump(d.input.node);
  bump(d.output.node);
  for (const p of design.parts) for (const n of p.kind === 'tube' ? Object.values(p.nodes) : p.nodes) if (n) bump(n);
  for (const [n, c] of uses) if (n !== GROUND && c < 2) throw new DesignError(`node "${n}" connects to only one terminal (unknown or misspelt node?)`);
  const circuit = designCircuit(design);
  const floating = gridsWithoutDcPath(circuit.elements, circuit.input, GROUND);
  if (floating.length > 0) {
    const f = floating[0]!;
    throw new DesignError(`grid of ${f.tube} (node "${f.grid}") has no DC path: add a grid resistor`);
  }
  return design;
}

function tubeElement(p: TubePart): NetTube {
  const t = tubeType(p.type);
  // The sample factor scales plate (and screen) current: kg1, kg2 divided by it (netlist-v1 equations).
  if (t.kind === 'triode') {
    return {
      id: p.id,
      kind: 'triode',
      nodes: { plate: p.nodes.plate, grid: p.nodes.grid, cathode: p.nodes.cathode },
      model: { name: 'koren-triode', ...t.model, kg1: t.model.kg1 / p.sample },
      gridCurrent: t.gridCurrent,
    };
  }
  return {
    id: p.id,
    kind: 'pentode',
    nodes: { plate: p.nodes.plate, screen: p.nodes.screen ?? '', grid: p.nodes.grid, cathode: p.nodes.cathode },
    model: { name: 'koren-pentode', ...t.model, kg1: t.model.kg1 / p.sample, kg2: t.model.kg2 / p.sample },
    gridCurrent: t.gridCurrent,
  };
}

/** Suffixes of the capacitors that stand for a tube's interelectrode capacitances. */
export const INTERELECTRODE_SUFFIXES = ['.Cgp', '.Cgk', '.Cpk'] as const;

/**
 * The tube's interelectrode capacitances as capacitor elements (none where two electrodes share a
 * node), integrated by BDF2 in the engine because they are stiff (see CapacitorIntegration).
 */
export function interelectrodeCapacitors(p: TubePart): EngineCapacitor[] {
  if (p.interelectrode === false) return [];
  const c = tubeType(p.type).capacitance,
    n = p.nodes,
    integration = 'bdf2' as const;
  const all: EngineCapacitor[] = [
    { id: p.id + INTERELECTRODE_SUFFIXES[0], kind: 'capacitor', nodes: [n.grid, n.plate], farads: c.gridPlateFarads, integration },
    { id: p.id + INTERELECTRODE_SUFFIXES[1], kind: 'capacitor', nodes: [n.grid, n.cathode], farads: c.gridCathodeFarads, integration },
    { id: p.id + INTERELECTRODE_SUFFIXES[2], kind: 'capacitor', nodes: [n.plate, n.cathode], farads: c.plateCathodeFarads, integration },
  ];
  return all.filter((e) => e.nodes[0] !== e.nodes[1] && e.farads > 0);
}

function elementsOf(d: Design, openSwitches: 'keep' | 'omit'): EngineElement[] {
  const out: EngineElement[] = [
    { id: SUPPLY_ID, kind: 'dc-source', nodes: [d.supply.node, GROUND], volts: d.supply.volts, ohms: d.supply.ohms },
    ...(d.supply.filterFarads > 0
      ? [{ id: SUPPLY_FILTER_ID, kind: 'capacitor' as const, nodes: [d.supply.node, GROUND] as const, farads: d.supply.filterFarads }]
      : []),
    { id: LOAD_ID, kind: 'resistor', nodes: [d.output.node, GROUND], ohms: d.output.loadOhms },
  ];
  for (const p of d.parts) {
    switch (p.kind) {
      case 'resistor':
        out.push({ id: p.id, kind: 'resistor', nodes: p.nodes, ohms: p.ohms });
        break;
      case 'capacitor':
        out.push({ id: p.id, kind: 'capacitor', nodes: p.nodes, farads: p.farads });
        break;
      case 'pot': {
        const r = potResistors(p);
        out.push({ id: potUpperId(p.id), kind: 'resistor', nodes: [p.nodes[0], p.nodes[1]], ohms: r.upperOhms });
        if (p.nodes[1] !== p.nodes[2]) out.push({ id: potLowerId(p.id), kind: 'resistor', nodes: [p.nodes[1], p.nodes[2]], ohms: r.lowerOhms });
        break;
      }
      case 'switch': {
        const contactOhms = p.contactOhms ?? DEFAULT_CONTACT_OHMS;
        if (openSwitches === 'keep') out.push({ id: p.id, kind: 'switch', nodes: p.nodes, closed: p.closed, contactOhms });
        else if (p.closed) out.push({ id: p.id, kind: 'resistor', nodes: p.nodes, ohms: contactOhms });
        break;
      }
      case 'tube':
        out.push(tubeElement(p), ...interelectrodeCapacitors(p));
        break;
    }
  }
  return out;
}

/** The engine's circuit (switches kept as switches so they can be flipped at run time). */
export function designCircuit(d: Design): EngineCircuit {
  return { ground: GROUND, input: { node: d.input.node, ohms: d.input.ohms }, output: { node: d.output.node }, elements: elementsOf(d, 'keep') };
}

/** The netlist interchange form at the present settings (pots as two resistors, open switches left out). */
export function designToNetlist(d: Design): Netlist {
  return {
    schema: NETLIST_SCHEMA,
    ground: GROUND,
    input: { node: d.input.node, ohms: d.input.ohms },
    output: { node: d.output.node },
    // the interchange form has no integration field (netlist-v1): drop it
    elements: elementsOf(d, 'omit').map((e) => (e.kind === 'capacitor' ? { id: e.id, kind: e.kind, nodes: e.nodes, farads: e.farads } : e)) as NetElement[],
  };
}

/** Engine-level updates that stand for a new value of one design part. */
export function partValueUpdates(part: Part): { id: string; value: number }[] {
  switch (part.kind) {
    case 'resistor':
      return [{ id: part.id, value: part.ohms }];
    case 'capacitor':
      return [{ id: part.id, value: part.farads }];
    case 'pot': {
      const r = potResistors(part);
      const up = [{ id: potUpperId(part.id), value: r.upperOhms }];
      return part.nodes[1] === part.nodes[2] ? up : [...up, { id: potLowerId(part.id), value: r.lowerOhms }];
    }
    default:
      return [];
  }
}

/**
 * Volts at the circuit input for a full-scale sample when nothing says otherwise: the workspace
 * and the command line (render --input-volts, pair --input-volts) start from this one figure.
 * 1 V peak is a hot humbucker chord (from memory; pickup and DI level measurements, common practice "Guitar signals").
 */
export const DEFAULT_INPUT_VOLTS_AT_FULL_SCALE = 1;

/** A pot that works as the volume control: wiper on the output node, or named/labelled volume or level. */
export function isVolumePot(p: Part, outputNode: string): p is PotPart {
  return p.kind === 'pot' && (p.nodes[1] === outputNode || /^vol/i.test(p.id) || /\b(volume|level)\b/i.test(p.label ?? ''));
}

/**
 * The design with every volume control fully clockwise (position 1): the reference a render or
 * the workspace levels against, so that the volume knob still changes the level heard.
 */
export function withVolumeFull(d: Design): Design {
  if (!d.parts.some((p) => isVolumePot(p, d.output.node))) return d;
  return { ...d, parts: d.parts.map((p) => (isVolumePot(p, d.output.node) ? { ...p, position: 1 } : p)) };
}

/** Replace one part (by id) in a design, returning a new design. */
export function withPart(d: Design, part: Part): Design {
  return { ...d, parts: d.parts.map((p) => (p.id === part.id ? part : p)) };
}
