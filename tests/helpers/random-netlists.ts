// Seeded random two-tube netlists over the netlist-v1 family the engine accepts, for the torture
// tests: a pentode or triode first stage biased by grid leak or by a cathode resistor (bypassed
// or not), direct- or capacitor-coupled into a triode, a tone low-pass and a volume divider,
// a B+ source with filter and decoupling; values drawn log-uniformly over wide ranges (about a
// decade either side of common practice), optional stiff interelectrode capacitances, either
// netlist-v1 grid law (dempwolf-zolzer or initial-velocity).
import type { NetElement, Netlist } from '../../src/dsp/circuit/netlist.ts';
import { makeRandom } from '../../src/dsp/random.ts';

/** The project's seeded PRNG (mulberry32), re-exported for the torture tests' signal draws. */
export const seeded = makeRandom;

// Koren 1996 triode sets (12AX7, 12AT7, 12AU7: Koren, "Improved vacuum tube models for SPICE
// simulations", Glass Audio 8(5), 1996, his published library) and a public Koren-form EF86 fit.
const TRIODES = [
  { name: 'koren-triode', mu: 100, ex: 1.4, kg1: 1060, kp: 600, kvb: 300 },
  { name: 'koren-triode', mu: 60, ex: 1.35, kg1: 460, kp: 300, kvb: 300 },
  { name: 'koren-triode', mu: 21.5, ex: 1.3, kg1: 1180, kp: 84, kvb: 300 },
] as const;
const EF86 = { name: 'koren-pentode', mu: 34.9, ex: 1.35, kg1: 2648.1, kg2: 4627, kp: 222.06, kvb: 4.7 } as const;
// Grid laws: Dempwolf & Zölzer, DAFx-11, their 12AX7 grid-current fit; and the netlist-v1
// initial-velocity law (docs/netlist-v1.md) with an oxide cathode's 1050 K and xi 3/2
// (Child-Langmuir), gg and onset near the same 12AX7 (handbook orders of magnitude, from memory).
const DZ_GRID = { name: 'dempwolf-zolzer', gg: 6.177e-4, cg: 9.901, xi: 1.314, ig0: 8.025e-8 } as const;
const IV_GRID = { name: 'initial-velocity', gg: 3.1e-4, xi: 1.5, cathodeKelvin: 1050, onsetVolts: -0.49 } as const;

export interface RandomNetlistInfo {
  readonly netlist: Netlist;
  /** What was drawn, for failure messages. */
  readonly label: string;
}

/**
 * Case `index` of the family for `seed`. The first-stage kind, the bias of each stage and the
 * interstage coupling cycle through all their combinations as index runs (so any 12 consecutive
 * indices cover them all); the values are random.
 */
export function randomNetlist(seed: number, index: number): RandomNetlistInfo {
  const rnd = seeded(seed * 7919 + index * 104729 + 1);
  const logU = (lo: number, hi: number) => lo * Math.exp(rnd() * Math.log(hi / lo));
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(rnd() * xs.length)]!;
  const pentode = index % 2 === 0;
  const bias1: 'grid-leak' | 'cathode' | 'cathode-bypassed' = (['grid-leak', 'cathode', 'cathode-bypassed'] as const)[Math.floor(index / 2) % 3]!;
  const coupling: 'direct' | 'capacitor' = Math.floor(index / 6) % 2 === 0 ? 'direct' : 'capacitor';
  const bias2: 'cathode' | 'cathode-bypassed' | 'grid-leak' =
    coupling === 'direct' ? pick(['cathode', 'cathode-bypassed'] as const) : pick(['cathode', 'cathode-bypassed', 'grid-leak'] as const);
  const strays = rnd() < 0.5;
  // Without grid current a pentode driven positive meets the netlist-v1 pentode law's jump: as
  // Vsk -> 0+ with Vgk > 0, E1 -> Vgk (not 0), and Ip = 0 for Vsk <= 0, so the circuit may have
  // no solution at all (the reference fails there too). Pentodes here always have their grid law.
  const withGrid = pentode || rnd() < 0.8;
  const GRID = rnd() < 0.5 ? DZ_GRID : IV_GRID;
  const els: NetElement[] = [];
  const R = (id: string, a: string, b: string, ohms: number) => els.push({ id, kind: 'resistor', nodes: [a, b], ohms });
  const C = (id: string, a: string, b: string, farads: number) => els.push({ id, kind: 'capacitor', nodes: [a, b], farads });
  const bPlus = logU(120, 450);
  els.push({ id: 'B1', kind: 'dc-source', nodes: ['bp', '0'], volts: bPlus, ohms: logU(50, 5000) });
  C('C1', 'bp', '0', logU(4.7e-6, 220e-6));
  R('R1', 'bp', 'bp1', logU(1e3, 100e3));
  C('C2', 'bp1', '0', logU(4.7e-6, 100e-6));
  // input: a coupling capacitor into the grid leak, or a grid stopper straight in
  const inputOhms = rnd() < 0.1 ? 0 : logU(100, 200e3);
  if (rnd() < 0.7) C('C3', 'in', 'g1', logU(1e-9, 220e-9));
  else R('R2s', 'in', 'g1', logU(1e3, 470e3));
  const gridLeak = bias1 === 'grid-leak';
  R('R2', 'g1', '0', gridLeak ? logU(1e6, 22e6) : logU(100e3, 4.7e6));
  const k1 = gridLeak ? '0' : 'k1';
  if (!gridLeak) {
    R('R4', 'k1', '0', logU(220, 22e3));
    if (bias1 === 'cathode-bypassed') C('C5', 'k1', '0', logU(0.22e-6, 100e-6));
  }
  if (pentode) {
    els.push({
      id: 'V1',
      kind: 'pentode',
      nodes: { plate: 'p1', screen: 's1', grid: 'g1', cathode: k1 },
      model: EF86,
      ...(withGrid ? { gridCurrent: GRID } : {}),
    });
    R('R3', 'bp1', 'p1', logU(47e3, 2.2e6));
    R('R5', 'bp1', 's1', logU(100e3, 10e6));
    C('C4', 's1', '0', logU(10e-9, 2.2e-6));
  } else {
    els.push({ id: 'V1', kind: 'triode', nodes: { plate: 'p1', grid: 'g1', cathode: k1 }, model: pick(TRIODES), ...(withGrid ? { gridCurrent: GRID } : {}) });
    R('R3', 'bp1', 'p1', logU(22e3, 470e3));
  }
  // second stage (a triode)
  const g2 = coupling === 'direct' ? 'p1' : 'g2';
  if (coupling === 'capacitor') {
    C('C6', 'p1', 'g2', logU(1e-9, 220e-9));
    R('R6', 'g2', '0', bias2 === 'grid-leak' ? logU(1e6, 22e6) : logU(47e3, 2.2e6));
  }
  const k2 = bias2 === 'grid-leak' ? '0' : 'k2';
  if (bias2 !== 'grid-leak') {
    // direct coupling puts the first plate (tens to hundreds of volts) on the grid: the cathode
    // resistor must be large to bias it
    R('R7', 'k2', '0', coupling === 'direct' ? logU(10e3, 330e3) : logU(220, 22e3));
    if (bias2 === 'cathode-bypassed') C('C7', 'k2', '0', logU(0.22e-6, 100e-6));
  }
  els.push({ id: 'V2', kind: 'triode', nodes: { plate: 'p2', grid: g2, cathode: k2 }, model: pick(TRIODES), ...(withGrid ? { gridCurrent: GRID } : {}) });
  R('R8', 'bp', 'p2', logU(10e3, 470e3));
  if (strays) {
    // interelectrode capacitances (pF on tens of kilohms: stiff at 48 kHz)
    C('V1.Cgp', 'g1', 'p1', logU(0.02e-12, 3e-12));
    C('V1.Cgk', 'g1', k1 === '0' ? '0' : k1, logU(1e-12, 6e-12));
    C('V2.Cgp', g2, 'p2', logU(0.5e-12, 3e-12));
  }
  // output: coupling cap, tone low-pass, volume divider, load
  C('C8', 'p2', 'o1', logU(1e-9, 470e-9));
  R('R9', 'o1', 't1', logU(1e3, 220e3));
  C('C9', 't1', '0', logU(100e-12, 47e-9));
  const pot = logU(10e3, 2.2e6),
    setting = 0.02 + 0.96 * rnd();
  R('R10', 't1', 'out', pot * (1 - setting));
  R('R11', 'out', '0', pot * setting);
  R('R12', 'out', '0', logU(100e3, 10e6));
  const netlist: Netlist = { schema: 'valvewright.netlist.v1', ground: '0', input: { node: 'in', ohms: inputOhms }, output: { node: 'out' }, elements: els };
  const label = `seed ${seed} #${index}: ${pentode ? 'pentode' : 'triode'} ${bias1}, ${coupling} into triode ${bias2}${strays ? ', strays' : ''}${withGrid ? `, ${GRID.name} grid law` : ', no grid law'}, B+ ${bPlus.toFixed(0)} V`;
  return { netlist, label };
}
