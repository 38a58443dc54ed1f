// Wiring check: faults a builder can see on the schematic, found from the topology (and, for
// polarised capacitors, from the DC voltages). Each finding names parts and nodes and says why.
import { designCircuit, GROUND, isVolumePot, SUPPLY_ID, type Design } from '../circuit/design.ts';
export { isVolumePot } from '../circuit/design.ts';
import type { EngineCircuit, EngineElement } from '../circuit/engine.ts';
import { NodeSets } from '../circuit/topology.ts';
import { dcResistanceBetween, linearNetwork, solveLinear } from './linear.ts';

export type Severity = 'error' | 'warning' | 'note';

export interface Finding {
  readonly severity: Severity;
  readonly code: string;
  readonly parts: readonly string[];
  readonly nodes: readonly string[];
  readonly message: string;
}

/** Series resistance from B+ to a control grid below which it is an error / a warning (project thresholds). */
export const BPLUS_GRID_ERROR_OHMS = 10e3;
export const BPLUS_GRID_WARNING_OHMS = 100e3;
/** Input-to-terminal transfer at 1 kHz above which the input "reaches" it (-20 dB, project threshold). */
export const INPUT_REACH_FRACTION = 0.1;
/** Reverse voltage an electrolytic tolerates (about 1 V, from memory). */
export const REVERSE_VOLTS_LIMIT = 1;
/** DC resistance from B+ to ground (the source aside) below which the supply is shorted (project threshold: over 0.3 A from 300 V). */
export const SUPPLY_SHORT_OHMS = 1e3;

export const partOf = (elementId: string): string => elementId.replace(/\.(1|2)$/, '');

type Tube = Extract<EngineElement, { kind: 'triode' | 'pentode' }>;

function fmtOhms(r: number): string {
  if (r >= 1e6) return `${+(r / 1e6).toPrecision(3)} M`;
  if (r >= 1e3) return `${+(r / 1e3).toPrecision(3)} k`;
  return `${+r.toPrecision(3)} `;
}

/** DC connectivity over resistors and switches (closed only, or all when `closeSwitches`), optionally without the supplies. */
function dcSets(c: EngineCircuit, opts: { closeSwitches: boolean; withSources: boolean }): NodeSets {
  const s = new NodeSets();
  s.find(c.ground);
  for (const e of c.elements) {
    if (e.kind === 'resistor' || (e.kind === 'switch' && (e.closed || opts.closeSwitches)) || (opts.withSources && e.kind === 'dc-source'))
      s.union(e.nodes[0], e.nodes[1]);
  }
  if (opts.withSources) s.union(c.input.node, c.ground);
  return s;
}

/** Smallest series resistance from any supply's positive node to each node, not passing through ground. */
function resistanceFromSupply(c: EngineCircuit): Map<string, { ohms: number; path: string[] }> {
  const best = new Map<string, { ohms: number; path: string[] }>();
  const edges = c.elements.filter((e) => e.kind === 'resistor' || (e.kind === 'switch' && e.closed)) as Extract<
    EngineElement,
    { kind: 'resistor' | 'switch' }
  >[];

  for (const e of c.elements)
    if (e.kind === 'dc-source' && e.volts > 0 && e.nodes[0] !== c.ground) {
      best.set(e.nodes[0], { ohms: 0, path: [partOf(e.id)] });
    }
  // Dijkstra with a linear scan (circuits are small)
  const done = new Set<string>();
  while (true) {
    let n: string | undefined,
      d = Infinity;
    for (const [k, v] of best)
      if (!done.has(k) && v.ohms < d) {
        d = v.ohms;
        n = k;
      }
    if (n === undefined) break;
    done.add(n);
    if (n === c.ground) continue;
    for (const e of edges) {
      if (!e.nodes.includes(n)) continue;
      const o = e.nodes[0] === n ? e.nodes[1] : e.nodes[0];
      const r = d + (e.kind === 'resistor' ? e.ohms : e.contactOhms);
      const cur = best.get(o);
      if (o !== c.ground && (!cur || r < cur.ohms)) best.set(o, { ohms: r, path: [...best.get(n)!.path, partOf(e.id)] });
    }
  }
  return best;
}

function nodeUses(d: Design): Map<string, number> {
  const uses = new Map<string, number>();
  const bump = (n: string) => uses.set(n, (uses.get(n) ?? 0) + 1);
  bump(d.supply.node);
  bump(d.input.node);
  bump(d.output.node);
  for (const p of d.parts) for (const n of p.kind === 'tube' ? Object.values(p.nodes) : p.nodes) if (n) bump(n);
  return uses;
}

function partsAt(d: Design, node: string): string[] {
  const out: string[] = [];
  for (const p of d.parts) if ((p.kind === 'tube' ? Object.values(p.nodes) : [...p.nodes]).includes(node)) out.push(p.id);
  return out;
}

export interface WiringContext {
  /** DC node voltages, warm (operating point). */
  readonly warmNodes?: Readonly<Record<string, number>>;
  /** DC node voltages, cold start (tubes not conducting). */
  readonly coldNodes?: Readonly<Record<string, number>>;
}

/** All wiring findings for a design. Pure; the DC voltages in `ctx` are only used for polarised capacitors. */
export function checkWiring(design: Design, ctx: WiringContext = {}): Finding[] {
  const f: Finding[] = [];
  const c = designCircuit(design);
  const tubes = c.elements.filter((e): e is Tube => e.kind === 'triode' || e.kind === 'pentode');
  const sets = dcSets(c, { closeSwitches: false, withSources: true });
  const closed = dcSets(c, { closeSwitches: true, withSources: true });
  const openSwitches = design.parts.filter((p) => p.kind === 'switch' && !p.closed).map((p) => p.id);
  const reported = new Set<string>();

  // dangling terminals
  for (const [n, count] of nodeUses(design)) {
    if (n !== GROUND && count < 2) {
      reported.add(n);
      f.push({
        severity: 'error',
        code: 'node-dangling',
        parts: partsAt(design, n),
        nodes: [n],
        message: `node "${n}" connects to only one terminal (${partsAt(design, n).join(', ') || 'nothing'}): a misspelt node name or a missing wire`,
      });
    }
  }

  const viaSwitch = (a: string, b: string) => !sets.same(a, b) && closed.same(a, b);

  for (const t of tubes) {
    const { grid: g, cathode: k } = t.nodes;
    // every cathode returns
    if (!sets.same(k, c.ground)) {
      reported.add(k);
      if (viaSwitch(k, c.ground))
        f.push({
          severity: 'note',
          code: 'cathode-lifted',
          parts: [t.id, ...openSwitches],
          nodes: [k],
          message: `${t.id} cathode (node "${k}") has no DC return while switch ${openSwitches.join('/')} is open: the stage is off, as a lift switch intends`,
        });
      else
        f.push({
          severity: 'error',
          code: 'cathode-no-return',
          parts: [t.id, ...partsAt(design, k).filter((x) => x !== t.id)],
          nodes: [k],
          message: `${t.id} cathode (node "${k}") has no DC path to ground: no plate current can flow and the cathode floats up toward the plate, stressing heater-cathode insulation; add a cathode resistor to ground`,
        });
    }
    // every control grid has a DC path to its cathode circuit
    if (!sets.same(g, k) && sets.same(k, c.ground)) {
      reported.add(g);
      f.push({
        severity: viaSwitch(g, k) ? 'note' : 'error',
        code: 'grid-no-dc-path',
        parts: [t.id, ...partsAt(design, g).filter((x) => x !== t.id)],
        nodes: [g, k],
        message: `${t.id} control grid (node "${g}") has no DC path to its cathode circuit (node "${k}"): the grid charges on grid current and leakage until the tube blocks or runs away; add a grid resistor to the cathode return (ground)`,
      });
    }
  }

  // screens and plates fed from a supply, not only through ground
  const fed = resistanceFromSupply(c);
  for (const t of tubes) {
    const checks: [string, string, string][] = [[t.nodes.plate, 'plate', 'plate-not-fed']];
    if (t.kind === 'pentode') checks.push([t.nodes.screen, 'screen', 'screen-not-fed']);
    for (const [node, what, code] of checks) {
      if (fed.has(node)) continue;
      reported.add(node);
      f.push({
        severity: 'error',
        code,
        parts: [t.id, ...partsAt(design, node).filter((x) => x !== t.id)],
        nodes: [node],
        message: `${t.id} ${what} (node "${node}") has no DC feed from B+: ${what === 'screen' ? 'a pentode without screen voltage passes almost no plate current' : 'the tube cannot conduct'}; connect it to B+ through a ${what === 'screen' ? 'screen' : 'plate'} resistor`,
      });
    }
  }

  // no node floats (DC)
  const allNodes = new Set<string>();
  for (const e of c.elements) for (const n of e.kind === 'triode' || e.kind === 'pentode' ? Object.values(e.nodes) : e.nodes) allNodes.add(n);
  for (const n of allNodes) {
    if (n === c.ground || reported.has(n) || sets.same(n, c.ground)) continue;
    const sw = closed.same(n, c.ground);
    f.push({
      severity: sw ? 'note' : 'error',
      code: 'node-floats',
      parts: partsAt(design, n),
      nodes: [n],
      message: sw
        ? `node "${n}" floats at DC while switch ${openSwitches.join('/')} is open`
        : `node "${n}" has no DC path to ground (only capacitors or tubes reach it): its voltage is set by leakage, so the capacitors on it can charge to anything and thump; add a resistor to ground or to a defined node`,
    });
  }

  // the input reaches a control grid, not a screen or plate (passive transfer at 1 kHz, tubes removed)
  const v = solveLinear(linearNetwork(c, { tubes: 'removed' }), 2 * Math.PI * 1000);
  const vin = Math.hypot(v.re[c.input.node] ?? 0, v.im[c.input.node] ?? 0) || 1;
  const reach = (n: string) => Math.hypot(v.re[n] ?? 0, v.im[n] ?? 0) / vin;
  let bestGrid = 0;
  const gridNodes = new Set(tubes.map((t) => t.nodes.grid));
  for (const t of tubes) {
    bestGrid = Math.max(bestGrid, reach(t.nodes.grid));
    const others: [string, string][] = [[t.nodes.plate, 'plate']];
    if (t.kind === 'pentode') others.push([t.nodes.screen, 'screen']);
    for (const [n, what] of others) {
      if (gridNodes.has(n) && what === 'plate') continue; // a direct-coupled plate is also the next grid
      if (reach(n) > INPUT_REACH_FRACTION)
        f.push({
          severity: 'error',
          code: `input-on-${what}`,
          parts: [t.id, ...partsAt(design, design.input.node)],
          nodes: [design.input.node, n],
          message: `the input (node "${design.input.node}") reaches ${t.id}'s ${what} (node "${n}", ${(20 * Math.log10(reach(n))).toFixed(0)} dB at 1 kHz): the guitar signal belongs on a control grid; a ${what} carries B+ back toward the guitar and gives no gain`,
        });
    }
  }
  if (tubes.length > 0 && bestGrid <= INPUT_REACH_FRACTION) {
    f.push({
      severity: 'error',
      code: 'input-reaches-no-grid',
      parts: partsAt(design, design.input.node),
      nodes: [design.input.node],
      message: `the input (node "${design.input.node}") reaches no control grid through the passive signal path (best ${bestGrid > 0 ? (20 * Math.log10(bestGrid)).toFixed(0) : '-inf'} dB at 1 kHz): the circuit will pass little or nothing`,
    });
  }

  // B+ reaches a control grid only through a large series resistance
  for (const t of tubes) {
    const r = fed.get(t.nodes.grid);
    if (!r || r.ohms >= BPLUS_GRID_WARNING_OHMS) continue;
    const err = r.ohms < BPLUS_GRID_ERROR_OHMS;
    f.push({
      severity: err ? 'error' : 'warning',
      code: 'bplus-to-grid',
      parts: [t.id, ...r.path.filter((x) => x !== SUPPLY_ID)],
      nodes: [design.supply.node, t.nodes.grid],
      message: `B+ reaches ${t.id}'s control grid (node "${t.nodes.grid}") through only ${fmtOhms(r.ohms)}ohms (${r.path.join(' -> ')}): the grid is driven positive, draws heavy grid current and can destroy the tube; keep at least ${fmtOhms(BPLUS_GRID_WARNING_OHMS)}ohms (a plate load) in series`,
    });
  }

  // the supply is not shorted to ground (resistors and closed switches only, the source aside)
  if (design.supply.node !== c.ground) {
    let r: number;
    try {
      r = dcResistanceBetween({ ...c, elements: c.elements.filter((e) => e.kind !== 'dc-source') }, design.supply.node, c.ground);
    } catch {
      r = Infinity;
    }
    if (Number.isFinite(r) && r >= 0 && r < SUPPLY_SHORT_OHMS) {
      f.push({
        severity: 'error',
        code: 'supply-shorted',
        parts: partsAt(design, design.supply.node),
        nodes: [design.supply.node, c.ground],
        message: `B+ (node "${design.supply.node}") has only ${fmtOhms(r)}ohms to ground: the supply is shorted, the rectifier, transformer or fuse fails at switch-on; find the wire or part from B+ to ground`,
      });
    }
  }

  // a grounded-cathode stage with its plate straight on B+ has no load: no gain, full B+ on the plate
  for (const t of tubes) {
    const r = fed.get(t.nodes.plate);
    if (!r || r.ohms > 0) continue;
    let rk = 0;
    if (t.nodes.cathode !== c.ground) {
      try {
        rk = dcResistanceBetween(c, t.nodes.cathode, c.ground);
      } catch {
        rk = Infinity;
      }
    }
    if (rk < 100)
      f.push({
        severity: 'error',
        code: 'plate-no-load',
        parts: [t.id],
        nodes: [t.nodes.plate],
        message: `${t.id} plate (node "${t.nodes.plate}") sits straight on B+ with no plate load and its cathode at ground: the stage gives no output and nothing limits its current; add a plate resistor between B+ and the plate`,
      });
  }

  // volume controls: end 1 at ground, louder clockwise (common practice)
  for (const p of design.parts) {
    if (!isVolumePot(p, design.output.node)) continue;
    if (p.nodes[2] === c.ground && p.nodes[0] !== c.ground) {
      f.push({
        severity: 'note',
        code: 'volume-reversed',
        parts: [p.id],
        nodes: [p.nodes[0], p.nodes[2]],
        message: `volume ${p.id} has end 2 at ground and end 1 on the signal: it gets quieter as it turns clockwise; the usual wiring (common practice) puts end 1 at ground so it gets louder clockwise`,
      });
    }
  }

  // polarised capacitors the right way round (nodes[0] is +)
  for (const p of design.parts) {
    if (p.kind !== 'capacitor' || !p.polarized) continue;
    for (const [state, nodes] of [
      ['warm idle', ctx.warmNodes],
      ['cold start', ctx.coldNodes],
    ] as const) {
      if (!nodes) continue;
      const dv = (nodes[p.nodes[0]] ?? 0) - (nodes[p.nodes[1]] ?? 0);
      if (dv < -REVERSE_VOLTS_LIMIT) {
        f.push({
          severity: 'error',
          code: 'capacitor-reversed',
          parts: [p.id],
          nodes: [p.nodes[0], p.nodes[1]],
          message: `polarised ${p.id} has its + lead (node "${p.nodes[0]}") ${(-dv).toFixed(1)} V below its - lead (node "${p.nodes[1]}") at ${state}: a reversed electrolytic heats, leaks and can burst; turn it round`,
        });
        break;
      }
    }
  }
  return f;
}
