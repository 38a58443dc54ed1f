// Editing a circuit: pure functions over a readonly Design. Every edit returns the new design, or
// the reason it was refused; a refused edit changes nothing, and an edit that would change nothing
// returns the same object (so no undo step is recorded for it). Results pass the design's own
// validation without the wiring rules (a sheet being built may have a node with one connection or
// a grid with no DC path yet: the wiring check reports those and the sheet plays once they are fixed).
import { DESIGN_SCHEMA, GROUND, LOAD_ID, SUPPLY_FILTER_ID, SUPPLY_ID, validateDesign, type Design, type Part, type TubePart } from './design.ts';
import { tubeType } from '../tubes/library.ts';
import { userTubeType } from '../tubes/user-tube.ts';

export type EditResult = { readonly ok: true; readonly design: Design } | { readonly ok: false; readonly reason: string };

export type PartKind = Part['kind'];
/** Terminal names: '0' / '1' (/ '2' for a pot's end 2) for two- and three-terminal parts, electrode names for a tube. */
export type Terminal = string;

/** A blank sheet: the guitar input, the output and a B+ supply, with the input's grid leak as its one part. */
export function emptySheet(): Design {
  return {
    schema: DESIGN_SCHEMA,
    name: 'My circuit',
    description: 'Started from an empty sheet.',
    input: { node: 'in', ohms: 10e3 },
    output: { node: 'in', loadOhms: 1e6 },
    // 250 V through 1 k into 47 uF: a small-signal tube supply (common practice)
    supply: { node: 'bp', volts: 250, ohms: 1e3, filterFarads: 47e-6 },
    parts: [{ id: 'R1', kind: 'resistor', nodes: ['in', GROUND], ohms: 1e6, tolerance: 0.05, label: 'input grid leak' }],
  };
}

/** The part's terminals in order, with the node each is on. */
export function terminalsOf(p: Part): { readonly terminal: Terminal; readonly node: string; readonly name: string }[] {
  switch (p.kind) {
    case 'tube': {
      const out = [
        { terminal: 'plate', node: p.nodes.plate, name: 'plate' },
        { terminal: 'grid', node: p.nodes.grid, name: 'grid' },
        { terminal: 'cathode', node: p.nodes.cathode, name: 'cathode' },
      ];
      return p.nodes.screen !== undefined ? [...out, { terminal: 'screen', node: p.nodes.screen, name: 'screen' }] : out;
    }
    case 'pot':
      return [
        { terminal: '0', node: p.nodes[0], name: 'end 1' },
        { terminal: '1', node: p.nodes[1], name: 'wiper' },
        { terminal: '2', node: p.nodes[2], name: 'end 2' },
      ];
    case 'capacitor':
      return p.polarized
        ? [
            { terminal: '0', node: p.nodes[0], name: '+ lead' },
            { terminal: '1', node: p.nodes[1], name: '− lead' },
          ]
        : [
            { terminal: '0', node: p.nodes[0], name: 'lead 1' },
            { terminal: '1', node: p.nodes[1], name: 'lead 2' },
          ];
    default:
      return [
        { terminal: '0', node: p.nodes[0], name: 'lead 1' },
        { terminal: '1', node: p.nodes[1], name: 'lead 2' },
      ];
  }
}

/** Every node of the design (ground first, then in order of appearance). */
export function designNodes(d: Design): string[] {
  const out = [GROUND];
  const add = (n: string) => {
    if (!out.includes(n)) out.push(n);
  };
  add(d.input.node);
  add(d.supply.node);
  add(d.output.node);
  for (const p of d.parts) for (const t of terminalsOf(p)) add(t.node);
  return out;
}

const PREFIX: Record<PartKind, string> = { resistor: 'R', capacitor: 'C', pot: 'P', switch: 'S', tube: 'V' };
const RESERVED = new Set([SUPPLY_ID, SUPPLY_FILTER_ID, LOAD_ID]);

/** The next free id for a kind: R1, R2, ... (one past the highest number in use). */
export function nextPartId(d: Design, kind: PartKind): string {
  const prefix = PREFIX[kind];
  let max = 0;
  for (const p of d.parts) {
    const m = new RegExp(`^${prefix}(\\d+)$`).exec(p.id);
    if (m) max = Math.max(max, Number(m[1]));
  }
  let id = `${prefix}${max + 1}`;
  while (d.parts.some((p) => p.id === id) || RESERVED.has(id)) id = `${prefix}${++max + 1}`;
  return id;
}

/** A fresh node name not used in the design ("n1", "n2", ... or from a stem). */
export function freshNode(d: Design, stem = 'n'): string {
  const used = new Set(designNodes(d));
  for (let k = 1; ; k++) if (!used.has(`${stem}${k}`)) return `${stem}${k}`;
}

export interface NewPartSpec {
  readonly kind: PartKind;
  /** Nodes in terminal order (tube: plate, grid, cathode[, screen]). */
  readonly nodes: readonly string[];
  /** Library tube type for a tube. */
  readonly tubeType?: string;
  readonly id?: string;
}

/**
 * A new part with usual starting values (common practice for small-signal tube stages):
 * 100 k, 22 nF film, 500 k log pot at half, a closed switch, a nominal tube sample.
 */
export function makePart(d: Design, spec: NewPartSpec): Part | string {
  const id = spec.id ?? nextPartId(d, spec.kind);
  const n = spec.nodes;
  const need = (count: number): string | null => (n.length === count ? null : `a ${spec.kind} needs ${count} nodes (got ${n.length})`);
  switch (spec.kind) {
    case 'resistor':
      return need(2) ?? { id, kind: 'resistor', nodes: [n[0]!, n[1]!], ohms: 100e3, tolerance: 0.05 };
    case 'capacitor':
      return need(2) ?? { id, kind: 'capacitor', nodes: [n[0]!, n[1]!], farads: 22e-9, tolerance: 0.1 };
    case 'switch':
      return need(2) ?? { id, kind: 'switch', nodes: [n[0]!, n[1]!], closed: true };
    case 'pot':
      return need(3) ?? { id, kind: 'pot', nodes: [n[0]!, n[1]!, n[2]!], ohms: 500e3, taper: 'log', position: 0.5 };
    case 'tube': {
      const typeName = spec.tubeType ?? '12AX7';
      let pentode: boolean;
      try {
        pentode = tubeType(typeName).kind === 'pentode';
      } catch (err) {
        return (err as Error).message;
      }
      const bad = need(pentode ? 4 : 3);
      if (bad) return `${bad}: ${pentode ? 'plate, grid, cathode and screen' : 'plate, grid and cathode'}`;
      const nodes: TubePart['nodes'] = pentode ? { plate: n[0]!, grid: n[1]!, cathode: n[2]!, screen: n[3]! } : { plate: n[0]!, grid: n[1]!, cathode: n[2]! };
      return { id, kind: 'tube', type: typeName, sample: 1, nodes, heaterVolts: 0 };
    }
  }
}

function checked(before: Design, next: Design): EditResult {
  if (JSON.stringify(next) === JSON.stringify(before)) return { ok: true, design: before };
  try {
    return { ok: true, design: validateDesign(next, { wiring: false }) };
  } catch (err) {
    return { ok: false, reason: (err as Error).message };
  }
}

const nodeName = (n: string): string | null => {
  if (typeof n !== 'string' || !n.trim()) return 'a node needs a name';
  if (n !== n.trim() || /[\s,;"']/.test(n)) return `node name "${n}" may not contain spaces, commas, semicolons or quotes`;
  if (n.length > 32) return `node name "${n}" is longer than 32 characters`;
  return null;
};

/** Place a part (its nodes may be new ones). */
export function addPart(d: Design, part: Part): EditResult {
  if (d.parts.some((p) => p.id === part.id) || RESERVED.has(part.id)) return { ok: false, reason: `part id "${part.id}" is already used` };
  for (const t of terminalsOf(part)) {
    const bad = nodeName(t.node);
    if (bad) return { ok: false, reason: bad };
  }
  return checked(d, { ...d, parts: [...d.parts, part] });
}

/** Delete a part. */
export function removePart(d: Design, id: string): EditResult {
  const p = d.parts.find((q) => q.id === id);
  if (!p) return { ok: false, reason: `there is no part "${id}"` };
  if (d.parts.length === 1) return { ok: false, reason: `${id} is the only part: a design needs at least one (start an empty sheet instead)` };
  const parts = d.parts.filter((q) => q.id !== id);
  const still = new Set(parts.flatMap((q) => terminalsOf(q).map((t) => t.node)));
  if (!still.has(d.output.node))
    return { ok: false, reason: `removing ${id} would leave the output node "${d.output.node}" unconnected: move the output first` };
  return checked(d, withoutPosition({ ...d, parts }, id));
}

/** The design without a saved sheet position for a part (a deleted part leaves none behind). */
function withoutPosition(d: Design, id: string): Design {
  const positions = d.sheet?.positions;
  if (!positions || !(id in positions)) return d;
  const rest = Object.fromEntries(Object.entries(positions).filter(([k]) => k !== id));
  return { ...d, sheet: { ...d.sheet, positions: rest } };
}

/** Nudge a part on the sheet: its offset from where the layout puts it, saved with the design. */
export function nudgePart(d: Design, id: string, dx: number, dy: number): EditResult {
  if (!d.parts.some((p) => p.id === id)) return { ok: false, reason: `there is no part "${id}"` };
  if (!Number.isFinite(dx) || !Number.isFinite(dy)) return { ok: false, reason: 'a nudge must be a finite distance' };
  const old = d.sheet?.positions?.[id] ?? [0, 0];
  const next: readonly [number, number] = [old[0] + dx, old[1] + dy];
  if (next[0] === old[0] && next[1] === old[1]) return { ok: true, design: d };
  const positions = { ...(d.sheet?.positions ?? {}), [id]: next };
  if (next[0] === 0 && next[1] === 0) delete positions[id];
  return { ok: true, design: { ...d, sheet: { ...d.sheet, positions } } };
}

function withTerminal(p: Part, terminal: Terminal, node: string): Part | null {
  switch (p.kind) {
    case 'tube': {
      if (terminal !== 'plate' && terminal !== 'grid' && terminal !== 'cathode' && terminal !== 'screen') return null;
      if (terminal === 'screen' && p.nodes.screen === undefined) return null;
      return { ...p, nodes: { ...p.nodes, [terminal]: node } };
    }
    case 'pot': {
      const k = Number(terminal);
      if (![0, 1, 2].includes(k) || terminal === '') return null;
      const nodes: [string, string, string] = [p.nodes[0], p.nodes[1], p.nodes[2]];
      nodes[k] = node;
      return { ...p, nodes };
    }
    default: {
      const k = Number(terminal);
      if (![0, 1].includes(k) || terminal === '') return null;
      const nodes: [string, string] = [p.nodes[0], p.nodes[1]];
      nodes[k] = node;
      return { ...p, nodes };
    }
  }
}

/** Move one lead of a part to another node (an existing one or a new one). */
export function moveLead(d: Design, id: string, terminal: Terminal, node: string): EditResult {
  const p = d.parts.find((q) => q.id === id);
  if (!p) return { ok: false, reason: `there is no part "${id}"` };
  const bad = nodeName(node);
  if (bad) return { ok: false, reason: bad };
  const q = withTerminal(p, terminal, node);
  if (!q) return { ok: false, reason: `${id} has no terminal "${terminal}"` };
  const parts = d.parts.map((x) => (x.id === id ? q : x));
  const still = new Set(parts.flatMap((x) => terminalsOf(x).map((t) => t.node)));
  if (!still.has(d.output.node)) return { ok: false, reason: `moving that lead would leave the output node "${d.output.node}" unconnected` };
  return checked(d, { ...d, parts });
}

/**
 * Place a new two-terminal part across two terminals of an existing part (both leads of a
 * two-terminal part by default; end 1 and end 2 of a pot; grid and cathode of a tube).
 */
export function insertAcross(d: Design, targetId: string, part: Part, terminals?: readonly [Terminal, Terminal]): EditResult {
  const target = d.parts.find((q) => q.id === targetId);
  if (!target) return { ok: false, reason: `there is no part "${targetId}"` };
  if (part.kind === 'pot' || part.kind === 'tube') return { ok: false, reason: 'only a resistor, capacitor or switch can go across another part' };
  const ts = terminalsOf(target);
  const pick = terminals ?? (target.kind === 'tube' ? ['grid', 'cathode'] : target.kind === 'pot' ? ['0', '2'] : ['0', '1']);
  const a = ts.find((t) => t.terminal === pick[0]),
    b = ts.find((t) => t.terminal === pick[1]);
  if (!a || !b) return { ok: false, reason: `${targetId} has no terminals ${pick.join(' and ')}` };
  if (a.node === b.node) return { ok: false, reason: `${targetId}'s ${a.name} and ${b.name} are on the same node: nothing to go across` };
  return addPart(d, { ...part, nodes: [a.node, b.node] });
}

/**
 * Place a new two-terminal part in series with one terminal of an existing part: that terminal
 * moves to a new node, and the new part joins the new node to where the terminal was.
 */
export function insertInSeries(d: Design, targetId: string, terminal: Terminal, part: Part, newNode?: string): EditResult {
  const target = d.parts.find((q) => q.id === targetId);
  if (!target) return { ok: false, reason: `there is no part "${targetId}"` };
  if (part.kind === 'pot' || part.kind === 'tube') return { ok: false, reason: 'only a resistor, capacitor or switch can go in series with another part' };
  const t = terminalsOf(target).find((x) => x.terminal === terminal);
  if (!t) return { ok: false, reason: `${targetId} has no terminal "${terminal}"` };
  const m = newNode ?? freshNode(d);
  if (designNodes(d).includes(m)) return { ok: false, reason: `node "${m}" already exists: a part in series needs a new node` };
  const moved = withTerminal(target, terminal, m)!;
  const placed = addPart({ ...d, parts: d.parts.map((x) => (x.id === targetId ? moved : x)) }, { ...part, nodes: [t.node, m] });
  return placed.ok ? checked(d, placed.design) : placed;
}

/**
 * Rename a node everywhere (parts, input, output, supply). Renaming onto a node that exists
 * joins the two nodes; ground ("0") keeps its name.
 */
export function renameNode(d: Design, from: string, to: string): EditResult {
  if (from === to) return { ok: true, design: d };
  if (!designNodes(d).includes(from)) return { ok: false, reason: `there is no node "${from}"` };
  if (from === GROUND) return { ok: false, reason: 'ground ("0") keeps its name' };
  const bad = nodeName(to);
  if (bad) return { ok: false, reason: bad };
  const r = (n: string) => (n === from ? to : n);
  const parts = d.parts.map((p): Part => {
    switch (p.kind) {
      case 'tube':
        return {
          ...p,
          nodes: {
            plate: r(p.nodes.plate),
            grid: r(p.nodes.grid),
            cathode: r(p.nodes.cathode),
            ...(p.nodes.screen !== undefined ? { screen: r(p.nodes.screen) } : {}),
          },
        };
      case 'pot':
        return { ...p, nodes: [r(p.nodes[0]), r(p.nodes[1]), r(p.nodes[2])] };
      default:
        return { ...p, nodes: [r(p.nodes[0]), r(p.nodes[1])] };
    }
  });
  return checked(d, {
    ...d,
    parts,
    input: { ...d.input, node: r(d.input.node) },
    output: { ...d.output, node: r(d.output.node) },
    supply: { ...d.supply, node: r(d.supply.node) },
  });
}

/** Replace one part by id (a value or type change), structurally validated. */
export function replacePart(d: Design, part: Part): EditResult {
  if (!d.parts.some((p) => p.id === part.id)) return { ok: false, reason: `there is no part "${part.id}"` };
  return checked(d, { ...d, parts: d.parts.map((p) => (p.id === part.id ? part : p)) });
}

/** Move the circuit's output (where the load and the listener connect) or its input to another node. */
export function moveTerminalNode(d: Design, which: 'input' | 'output', node: string): EditResult {
  const bad = nodeName(node);
  if (bad) return { ok: false, reason: bad };
  if (node === GROUND) return { ok: false, reason: `the ${which} cannot be on ground` };
  if (which === 'output') {
    if (!designNodes({ ...d, output: { ...d.output, node: d.input.node } }).includes(node))
      return { ok: false, reason: `there is no node "${node}" for the output` };
    return checked(d, { ...d, output: { ...d.output, node } });
  }
  return checked(d, { ...d, input: { ...d.input, node } });
}

/** Set the fitted tube files the design carries (each validated and registered by the design check). */
export function replaceTubes(d: Design, userTubes: readonly unknown[]): EditResult {
  return checked(d, { ...d, userTubes });
}

/** Type names of the fitted tubes a design carries (files that do not read are left out). */
export function fittedTubeNames(d: Design): string[] {
  return (d.userTubes ?? []).flatMap((u, i) => {
    try {
      return [userTubeType(u, `userTubes[${i}]`).name];
    } catch {
      return [];
    }
  });
}

/**
 * Add a resistance-coupled triode stage after a node (the output by default): a coupling
 * capacitor into a 1 M grid leak, the tube with a plate load from the supply rail the other plate
 * loads use (or B+), a bypassed cathode resistor, and an output coupling capacitor; the output
 * moves to the new stage. Values are common practice for a 12AX7 small-signal stage (100 k plate
 * load, 1.5 k cathode, 22 uF bypass, 22 nF coupling).
 */
export function appendStage(d: Design, after: string = d.output.node, tubeTypeName = '12AX7'): EditResult {
  if (!designNodes(d).includes(after)) return { ok: false, reason: `there is no node "${after}"` };
  if (after === GROUND) return { ok: false, reason: 'a stage cannot follow ground' };
  let t: ReturnType<typeof tubeType>;
  try {
    t = tubeType(tubeTypeName);
  } catch (err) {
    return { ok: false, reason: (err as Error).message };
  }
  if (t.kind !== 'triode') return { ok: false, reason: `${tubeTypeName} is a ${t.kind}: the added stage is a triode stage` };
  const plates = new Set(d.parts.flatMap((p) => (p.kind === 'tube' ? [p.nodes.plate] : [])));
  const load = d.parts.find(
    (p) => p.kind === 'resistor' && (plates.has(p.nodes[0]) || plates.has(p.nodes[1])) && !(plates.has(p.nodes[0]) && plates.has(p.nodes[1])),
  );
  const rail = load && load.kind === 'resistor' ? (plates.has(load.nodes[0]) ? load.nodes[1] : load.nodes[0]) : d.supply.node;
  const tube = nextPartId(d, 'tube');
  const k = tube.replace(/^V/, '');
  const taken = new Set(designNodes(d));
  const node = (stem: string) => {
    let n = `${stem}${k}`,
      i = 2;
    while (taken.has(n)) n = `${stem}${k}_${i++}`;
    taken.add(n);
    return n;
  };
  const g = node('g'),
    p = node('p'),
    kn = node('k'),
    o = node('o');
  let x = d;
  const add = (part: Part): string | null => {
    const r = addPart(x, part);
    if (!r.ok) return r.reason;
    x = r.design;
    return null;
  };
  const steps: (() => Part)[] = [
    () => ({ id: nextPartId(x, 'capacitor'), kind: 'capacitor', nodes: [after, g], farads: 22e-9, tolerance: 0.1, label: `${tube} input coupling` }),
    () => ({ id: nextPartId(x, 'resistor'), kind: 'resistor', nodes: [g, GROUND], ohms: 1e6, tolerance: 0.05, label: `${tube} grid leak` }),
    () => ({ id: tube, kind: 'tube', type: tubeTypeName, sample: 1, nodes: { plate: p, grid: g, cathode: kn }, heaterVolts: 0, label: 'added stage' }),
    () => ({ id: nextPartId(x, 'resistor'), kind: 'resistor', nodes: [rail, p], ohms: 100e3, tolerance: 0.05, label: `${tube} plate load` }),
    () => ({ id: nextPartId(x, 'resistor'), kind: 'resistor', nodes: [kn, GROUND], ohms: 1.5e3, tolerance: 0.05, label: `${tube} cathode` }),
    () => ({
      id: nextPartId(x, 'capacitor'),
      kind: 'capacitor',
      nodes: [kn, GROUND],
      farads: 22e-6,
      tolerance: 0.2,
      polarized: true,
      label: `${tube} cathode bypass`,
    }),
    () => ({ id: nextPartId(x, 'capacitor'), kind: 'capacitor', nodes: [p, o], farads: 22e-9, tolerance: 0.1, label: `${tube} output coupling` }),
  ];
  for (const s of steps) {
    const bad = add(s());
    if (bad) return { ok: false, reason: bad };
  }
  return checked(d, { ...x, output: { ...x.output, node: o } });
}
