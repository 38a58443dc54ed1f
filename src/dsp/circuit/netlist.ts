// Netlist interchange, version 1 (shared spec netlist-v1): types, validation, reading.
import type { KorenPentodeParams, KorenTriodeParams } from '../tubes/models.ts';
import type { GridLaw } from '../tubes/grid-laws.ts';
import { parseGridCurrent, parsePlateModel } from '../tubes/registry.ts';

export const NETLIST_SCHEMA = 'valvewright.netlist.v1';

export interface NetResistor {
  readonly id: string;
  readonly kind: 'resistor';
  readonly nodes: readonly [string, string];
  readonly ohms: number;
}
export interface NetCapacitor {
  readonly id: string;
  readonly kind: 'capacitor';
  readonly nodes: readonly [string, string];
  readonly farads: number;
}
export interface NetDcSource {
  readonly id: string;
  readonly kind: 'dc-source';
  readonly nodes: readonly [string, string];
  readonly volts: number;
  readonly ohms: number;
}
/** A grid-current law by netlist-v1 name ('dempwolf-zolzer' or 'initial-velocity'; tubes/grid-laws.ts). */
export type NetGridCurrent = GridLaw;
export interface NetTriode {
  readonly id: string;
  readonly kind: 'triode';
  readonly nodes: { readonly plate: string; readonly grid: string; readonly cathode: string };
  readonly model: KorenTriodeParams & { readonly name: 'koren-triode' };
  readonly gridCurrent?: NetGridCurrent;
}
export interface NetPentode {
  readonly id: string;
  readonly kind: 'pentode';
  readonly nodes: { readonly plate: string; readonly screen: string; readonly grid: string; readonly cathode: string };
  readonly model: KorenPentodeParams & { readonly name: 'koren-pentode' };
  readonly gridCurrent?: NetGridCurrent;
}
export type NetElement = NetResistor | NetCapacitor | NetDcSource | NetTriode | NetPentode;
export type NetTube = NetTriode | NetPentode;

export interface Netlist {
  readonly schema: typeof NETLIST_SCHEMA;
  readonly ground: string;
  readonly input: { readonly node: string; readonly ohms: number };
  readonly output: { readonly node: string };
  readonly elements: readonly NetElement[];
}

export class NetlistError extends Error {
  override name = 'NetlistError';
}

type Json = Record<string, unknown>;
const isObj = (x: unknown): x is Json => typeof x === 'object' && x !== null && !Array.isArray(x);

function num(o: Json, key: string, where: string, opts: { positive?: boolean; allowZero?: boolean } = {}): number {
  const v = o[key];
  if (typeof v !== 'number' || !Number.isFinite(v)) throw new NetlistError(`${where}: "${key}" must be a finite number`);
  if (opts.positive && !(v > 0) && !(opts.allowZero && v === 0))
    throw new NetlistError(`${where}: "${key}" must be ${opts.allowZero ? 'zero or positive' : 'positive'} (got ${v})`);
  return v;
}

function str(o: Json, key: string, where: string): string {
  const v = o[key];
  if (typeof v !== 'string' || v.length === 0) throw new NetlistError(`${where}: "${key}" must be a non-empty string`);
  return v;
}

function twoNodes(o: Json, where: string): readonly [string, string] {
  const n = o.nodes;
  if (!Array.isArray(n) || n.length !== 2 || typeof n[0] !== 'string' || typeof n[1] !== 'string' || !n[0] || !n[1]) {
    throw new NetlistError(`${where}: "nodes" must be two node names`);
  }
  if (n[0] === n[1]) throw new NetlistError(`${where}: both ends on node "${n[0]}"`);
  return [n[0], n[1]];
}

const failNetlist = (message: string): never => {
  throw new NetlistError(message);
};

function element(e: unknown, index: number): NetElement {
  if (!isObj(e)) throw new NetlistError(`elements[${index}] must be an object`);
  const id = str(e, 'id', `elements[${index}]`);
  const where = `element ${id}`;
  switch (e.kind) {
    case 'resistor':
      return { id, kind: 'resistor', nodes: twoNodes(e, where), ohms: num(e, 'ohms', where, { positive: true }) };
    case 'capacitor':
      return { id, kind: 'capacitor', nodes: twoNodes(e, where), farads: num(e, 'farads', where, { positive: true }) };
    case 'dc-source':
      return {
        id,
        kind: 'dc-source',
        nodes: twoNodes(e, where),
        volts: num(e, 'volts', where),
        ohms: num(e, 'ohms', where, { positive: true, allowZero: true }),
      };
    case 'triode': {
      const n = e.nodes;
      if (!isObj(n)) throw new NetlistError(`${where}: nodes must name plate, grid and cathode`);
      const m = e.model;
      if (!isObj(m)) throw new NetlistError(`${where}: model.name must be "koren-triode"`);
      const gc = parseGridCurrent(e.gridCurrent, where, failNetlist);
      return {
        id,
        kind: 'triode',
        nodes: { plate: str(n, 'plate', where), grid: str(n, 'grid', where), cathode: str(n, 'cathode', where) },
        model: parsePlateModel('triode', m, where, failNetlist),
        ...(gc ? { gridCurrent: gc } : {}),
      };
    }
    case 'pentode': {
      const n = e.nodes;
      if (!isObj(n)) throw new NetlistError(`${where}: nodes must name plate, screen, grid and cathode`);
      const m = e.model;
      if (!isObj(m)) throw new NetlistError(`${where}: model.name must be "koren-pentode"`);
      const gc = parseGridCurrent(e.gridCurrent, where, failNetlist);
      return {
        id,
        kind: 'pentode',
        nodes: { plate: str(n, 'plate', where), screen: str(n, 'screen', where), grid: str(n, 'grid', where), cathode: str(n, 'cathode', where) },
        model: parsePlateModel('pentode', m, where, failNetlist),
        ...(gc ? { gridCurrent: gc } : {}),
      };
    }
    default:
      throw new NetlistError(`${where}: unknown kind ${JSON.stringify(e.kind)} (resistor, capacitor, dc-source, triode, pentode)`);
  }
}

export function tubeNodes(t: NetTube): string[] {
  return t.kind === 'triode' ? [t.nodes.plate, t.nodes.grid, t.nodes.cathode] : [t.nodes.plate, t.nodes.screen, t.nodes.grid, t.nodes.cathode];
}

export function elementNodes(e: NetElement): string[] {
  return e.kind === 'triode' || e.kind === 'pentode' ? tubeNodes(e) : [...e.nodes];
}

/** Parse and validate a netlist-v1 document (object or JSON text). Throws NetlistError with one clear line. */
export function parseNetlist(input: unknown): Netlist {
  let doc = input;
  if (typeof input === 'string') {
    try {
      doc = JSON.parse(input);
    } catch (err) {
      throw new NetlistError(`netlist is not valid JSON: ${(err as Error).message}`);
    }
  }
  if (!isObj(doc)) throw new NetlistError('netlist must be a JSON object');
  if (doc.schema !== NETLIST_SCHEMA) throw new NetlistError(`netlist "schema" must be "${NETLIST_SCHEMA}" (got ${JSON.stringify(doc.schema)})`);
  const ground = doc.ground === undefined ? '0' : doc.ground;
  if (typeof ground !== 'string' || !ground) throw new NetlistError('netlist "ground" must be a node name');
  if (!isObj(doc.input)) throw new NetlistError('netlist needs "input": { "node", "ohms" }');
  if (!isObj(doc.output)) throw new NetlistError('netlist needs "output": { "node" }');
  const input0 = { node: str(doc.input, 'node', 'input'), ohms: num(doc.input, 'ohms', 'input', { positive: true, allowZero: true }) };
  const output = { node: str(doc.output, 'node', 'output') };
  if (!Array.isArray(doc.elements) || doc.elements.length === 0) throw new NetlistError('netlist "elements" must be a non-empty array');
  const elements = doc.elements.map(element);
  const ids = new Set<string>();
  for (const e of elements) {
    if (ids.has(e.id)) throw new NetlistError(`duplicate element id "${e.id}"`);
    ids.add(e.id);
  }
  const netlist: Netlist = { schema: NETLIST_SCHEMA, ground, input: input0, output, elements };
  checkConnectivity(netlist);
  return netlist;
}

/** Node-level checks: every named node is used by an element, no node hangs on one terminal only. */
function checkConnectivity(n: Netlist): void {
  const count = new Map<string, number>();
  const bump = (node: string) => count.set(node, (count.get(node) ?? 0) + 1);
  for (const e of n.elements) for (const node of elementNodes(e)) bump(node);
  if (n.input.node !== n.ground) bump(n.input.node);
  if (!count.has(n.input.node)) throw new NetlistError(`input node "${n.input.node}" is not connected to any element`);
  if (!count.has(n.output.node) && n.output.node !== n.ground) throw new NetlistError(`output node "${n.output.node}" is not connected to any element`);
  if (!count.has(n.ground)) throw new NetlistError(`no element connects to ground node "${n.ground}"`);
}

/** Serialise to the interchange JSON (stable key order, 2-space indent). */
export function writeNetlist(n: Netlist): string {
  return JSON.stringify(n, null, 2) + '\n';
}
