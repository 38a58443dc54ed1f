// Tube and tolerance spread: seeded Monte Carlo. Run k draws its factors from its own stream
// (seed, k), so any split of runs over workers gives identical results; run 0 is the nominal design.
import { designCircuit, type Design, type Part } from '../circuit/design.ts';
import { CircuitEngine, type EngineCircuit, type OperatingPoint } from '../circuit/engine.ts';
import { tubeType } from '../tubes/library.ts';
import { gainAt } from './ac.ts';
import { makeRandom } from '../random.ts';

/** Tube sample strength range, x nominal plate current (a tube tester's article on sample spread, confirmed). */
export const TUBE_SPREAD = { low: 0.66, high: 1.33 } as const;
/**
 * Tube-to-tube spread of the grid-cathode contact potential, volts: uniform within ±0.3 V, moving
 * the onset of the initial-velocity grid law (docs/netlist-v1.md). Contact potentials of
 * oxide-cathode receiving tubes differ by a few tenths of a volt between samples and drift with
 * heater voltage and age (Spangenberg, "Vacuum Tubes", 1948, from memory; common practice: grid-leak
 * bias differs by tenths of a volt between tubes). Drawn from its own stream, so the sample
 * factors of a seed are unchanged.
 */
export const CONTACT_POTENTIAL_SPREAD_VOLTS = 0.3;
/** Tolerances used when a part gives none (common practice: carbon film 5 %, film caps 10 %, electrolytics 20 %, pots 20 %). */
export const DEFAULT_TOLERANCE = { resistor: 0.05, capacitor: 0.1, electrolytic: 0.2, pot: 0.2 } as const;

export interface SpreadOptions {
  /** Sine input for the output level, volts peak (default 0.5) at 1 kHz. */
  readonly levelInputVolts?: number;
  readonly sampleRateHz?: number;
}

export interface SpreadRun {
  readonly run: number;
  readonly tubeSamples: Readonly<Record<string, number>>;
  /** Contact-potential shift of each tube's grid-law onset, volts (0 in run 0). */
  readonly contactVolts: Readonly<Record<string, number>>;
  /** Value factor per part (1 = nominal). */
  readonly partFactors: Readonly<Record<string, number>>;
  readonly biased: boolean;
  readonly failures: readonly string[];
  readonly tubes: Readonly<Record<string, { readonly plateAmps: number; readonly vgk: number; readonly vpk: number; readonly plateWatts: number }>>;
  readonly nodes: Readonly<Record<string, number>>;
  readonly gainDb1k: number | null;
  readonly outputPeakVolts: number | null;
}

/** Deterministic 32-bit stream (mulberry32) seeded from (seed, run) through a 32-bit mix. */
export function runStream(seed: number, run: number): () => number {
  let h = (Math.imul((seed >>> 0) ^ 0x9e3779b9, 0x85ebca6b) ^ Math.imul(run + 1, 0xc2b2ae35)) >>> 0;
  h = Math.imul(h ^ (h >>> 16), 0x7feb352d) >>> 0;
  return makeRandom(h);
}

function tolOf(p: Part): number {
  switch (p.kind) {
    case 'resistor':
      return p.tolerance ?? DEFAULT_TOLERANCE.resistor;
    case 'capacitor':
      return p.tolerance ?? (p.polarized ? DEFAULT_TOLERANCE.electrolytic : DEFAULT_TOLERANCE.capacitor);
    case 'pot':
      return p.tolerance ?? DEFAULT_TOLERANCE.pot;
    default:
      return 0;
  }
}

/** The factors of run k: tube samples uniform over 0.66..1.33 x, values uniform within ±tolerance. Run 0 is nominal. */
export function runFactors(design: Design, seed: number, run: number): { tubeSamples: Record<string, number>; partFactors: Record<string, number> } {
  const tubeSamples: Record<string, number> = {},
    partFactors: Record<string, number> = {};
  const rnd = runStream(seed, run);
  for (const p of design.parts) {
    const u = rnd();
    if (p.kind === 'tube') tubeSamples[p.id] = run === 0 ? 1 : TUBE_SPREAD.low + (TUBE_SPREAD.high - TUBE_SPREAD.low) * u;
    else if (p.kind !== 'switch') partFactors[p.id] = run === 0 ? 1 : 1 + tolOf(p) * (2 * u - 1);
  }
  return { tubeSamples, partFactors };
}

/** The contact-potential shifts of run k, uniform within ±CONTACT_POTENTIAL_SPREAD_VOLTS (run 0: none). */
export function runContactVolts(design: Design, seed: number, run: number): Record<string, number> {
  const rnd = runStream(seed ^ 0x5bd1e995, run),
    out: Record<string, number> = {};
  for (const p of design.parts)
    if (p.kind === 'tube') {
      const u = rnd();
      out[p.id] = run === 0 ? 0 : CONTACT_POTENTIAL_SPREAD_VOLTS * (2 * u - 1);
    }
  return out;
}

/** The circuit with each tube's grid-law onset moved by its contact-potential shift (initial-velocity law only). */
export function withContactPotentials(circuit: EngineCircuit, contactVolts: Readonly<Record<string, number>>): EngineCircuit {
  return {
    ...circuit,
    elements: circuit.elements.map((e) => {
      if ((e.kind !== 'triode' && e.kind !== 'pentode') || !e.gridCurrent || e.gridCurrent.name !== 'initial-velocity') return e;
      return { ...e, gridCurrent: { ...e.gridCurrent, onsetVolts: e.gridCurrent.onsetVolts + (contactVolts[e.id] ?? 0) } };
    }),
  };
}

/** A design with every tube's sample factor multiplied and part values scaled. */
export function variedDesign(design: Design, tubeSamples: Readonly<Record<string, number>>, partFactors: Readonly<Record<string, number>> = {}): Design {
  return {
    ...design,
    parts: design.parts.map((p): Part => {
      const f = partFactors[p.id] ?? 1;
      switch (p.kind) {
        case 'tube':
          return { ...p, sample: p.sample * (tubeSamples[p.id] ?? 1) };
        case 'resistor':
          return { ...p, ohms: p.ohms * f };
        case 'capacitor':
          return { ...p, farads: p.farads * f };
        case 'pot':
          return { ...p, ohms: p.ohms * f };
        default:
          return p;
      }
    }),
  };
}

/** The low / nominal / high tube case (every tube at 0.66, 1 or 1.33 x), for rendering and listening. */
export function tubeCaseDesign(design: Design, which: 'low' | 'nominal' | 'high'): Design {
  const f = which === 'low' ? TUBE_SPREAD.low : which === 'high' ? TUBE_SPREAD.high : 1;
  const s: Record<string, number> = {};
  for (const p of design.parts) if (p.kind === 'tube') s[p.id] = f;
  return { ...variedDesign(design, s), name: `${design.name} (${which} tubes)` };
}

/** Why a biased tube stage is unusable at idle (project criteria), or [] when it is fine. */
export function biasFailures(design: Design, op: OperatingPoint): string[] {
  const out: string[] = [];
  for (const p of design.parts) {
    if (p.kind !== 'tube') continue;
    const t = op.tubes[p.id];
    if (!t) continue;
    const R = tubeType(p.type).ratings;
    const feed = op.nodes[design.supply.node] ?? design.supply.volts;
    const vk = op.nodes[p.nodes.cathode] ?? 0;
    if (t.plateAmps < 1e-6) out.push(`${p.id} cut off (plate ${(t.plateAmps * 1e6).toFixed(2)} uA)`);
    else if (t.vpk < 0.05 * (feed - vk)) out.push(`${p.id} saturated (plate-cathode ${t.vpk.toFixed(1)} V)`);
    if (t.vgk > 0.2) out.push(`${p.id} grid ${t.vgk.toFixed(2)} V above its cathode (grid conducts at idle)`);
    if (t.plateWatts > R.plateWatts) out.push(`${p.id} plate ${t.plateWatts.toFixed(2)} W over ${R.plateWatts} W`);
    if (t.vpk > R.plateVolts) out.push(`${p.id} plate ${t.vpk.toFixed(0)} V over ${R.plateVolts} V`);
    if (t.kind === 'pentode' && R.screenWatts !== undefined && t.screenWatts > R.screenWatts)
      out.push(`${p.id} screen ${t.screenWatts.toFixed(2)} W over ${R.screenWatts} W`);
    if (R.cathodeAmps !== undefined && t.cathodeAmps > R.cathodeAmps)
      out.push(`${p.id} cathode ${(t.cathodeAmps * 1e3).toFixed(1)} mA over ${R.cathodeAmps * 1e3} mA`);
    if (Math.abs(vk - (p.heaterVolts ?? 0)) > R.heaterCathodeVolts)
      out.push(`${p.id} heater-cathode ${Math.abs(vk - (p.heaterVolts ?? 0)).toFixed(0)} V over ${R.heaterCathodeVolts} V`);
  }
  return out;
}

/** One Monte Carlo run (pure: depends only on design, seed and run index). */
export function spreadRun(design: Design, seed: number, run: number, options: SpreadOptions = {}): SpreadRun {
  const { tubeSamples, partFactors } = runFactors(design, seed, run);
  const contactVolts = runContactVolts(design, seed, run);
  const d = variedDesign(design, tubeSamples, partFactors);
  const fs = options.sampleRateHz ?? 48000;
  const circuit = withContactPotentials(designCircuit(d), contactVolts);
  let engine: CircuitEngine;
  let op: OperatingPoint;
  try {
    engine = new CircuitEngine(circuit, fs);
    op = engine.operatingPoint();
  } catch (err) {
    return {
      run,
      tubeSamples,
      contactVolts,
      partFactors,
      biased: false,
      failures: [`no operating point: ${(err as Error).message}`],
      tubes: {},
      nodes: {},
      gainDb1k: null,
      outputPeakVolts: null,
    };
  }
  const failures = biasFailures(d, op);
  const gain = gainAt(circuit, op, 1000);
  const vin = options.levelInputVolts ?? 0.5;
  const n = Math.round(0.04 * fs);
  const dc = op.nodes[circuit.output.node] ?? 0;
  let peak = 0;
  for (let k = 0; k < n; k++) {
    const y = engine.processSample(vin * Math.sin((2 * Math.PI * 1000 * k) / fs));
    if (k >= n / 2) peak = Math.max(peak, Math.abs(y - dc));
  }
  const tubes: Record<string, { plateAmps: number; vgk: number; vpk: number; plateWatts: number }> = {};
  for (const [id, t] of Object.entries(op.tubes)) tubes[id] = { plateAmps: t.plateAmps, vgk: t.vgk, vpk: t.vpk, plateWatts: t.plateWatts };
  return {
    run,
    tubeSamples,
    contactVolts,
    partFactors,
    biased: failures.length === 0,
    failures,
    tubes,
    nodes: op.nodes,
    gainDb1k: gain > 0 ? 20 * Math.log10(gain) : null,
    outputPeakVolts: peak,
  };
}

export interface Stats {
  readonly min: number;
  readonly p5: number;
  readonly median: number;
  readonly p95: number;
  readonly max: number;
  readonly mean: number;
  readonly sd: number;
}

export function stats(xs: readonly number[]): Stats | null {
  if (xs.length === 0) return null;
  const s = [...xs].sort((a, b) => a - b);
  const q = (p: number) => s[Math.min(s.length - 1, Math.max(0, Math.round(p * (s.length - 1))))]!;
  const mean = s.reduce((a, b) => a + b, 0) / s.length;
  const sd = Math.sqrt(s.reduce((a, b) => a + (b - mean) ** 2, 0) / Math.max(1, s.length - 1));
  return { min: s[0]!, p5: q(0.05), median: q(0.5), p95: q(0.95), max: s[s.length - 1]!, mean, sd };
}

export interface SpreadSummary {
  readonly runs: number;
  readonly seed: number;
  readonly nominal: SpreadRun;
  /** Per tube: plate current, grid bias (Vgk, with the contact-potential spread) and plate voltage; contactVolts: the drawn shifts. */
  readonly tubes: Readonly<
    Record<string, { readonly plateAmps: Stats | null; readonly vgk: Stats | null; readonly vpk: Stats | null; readonly contactVolts: Stats | null }>
  >;
  /** The contact-potential distribution used (see CONTACT_POTENTIAL_SPREAD_VOLTS). */
  readonly contactPotential: { readonly distribution: 'uniform'; readonly halfWidthVolts: number };
  readonly gainDb1k: Stats | null;
  readonly outputPeakVolts: Stats | null;
  readonly failedRuns: readonly { readonly run: number; readonly failures: readonly string[] }[];
  readonly cases: Readonly<Record<'low' | 'nominal' | 'high', SpreadRun>>;
  readonly results: readonly SpreadRun[];
}

/** Summarise runs (ordered by run index) into distributions and failures. */
export function summariseSpread(design: Design, seed: number, results: readonly SpreadRun[], options: SpreadOptions = {}): SpreadSummary {
  const sorted = [...results].sort((a, b) => a.run - b.run);
  const ids = design.parts.filter((p) => p.kind === 'tube').map((p) => p.id);
  const tubes: Record<string, { plateAmps: Stats | null; vgk: Stats | null; vpk: Stats | null; contactVolts: Stats | null }> = {};
  for (const id of ids) {
    const ok = sorted.flatMap((r) => (r.tubes[id] ? [r.tubes[id]!] : []));
    tubes[id] = {
      plateAmps: stats(ok.map((t) => t.plateAmps)),
      vgk: stats(ok.map((t) => t.vgk)),
      vpk: stats(ok.map((t) => t.vpk)),
      contactVolts: stats(sorted.map((r) => r.contactVolts?.[id] ?? 0)),
    };
  }
  const caseRun = (which: 'low' | 'nominal' | 'high'): SpreadRun => {
    return spreadRun(tubeCaseDesign(design, which), seed, 0, options);
  };
  return {
    runs: sorted.length,
    seed,
    nominal: sorted.find((r) => r.run === 0) ?? spreadRun(design, seed, 0, options),
    tubes,
    contactPotential: { distribution: 'uniform', halfWidthVolts: CONTACT_POTENTIAL_SPREAD_VOLTS },
    gainDb1k: stats(sorted.flatMap((r) => (r.gainDb1k === null ? [] : [r.gainDb1k]))),
    outputPeakVolts: stats(sorted.flatMap((r) => (r.outputPeakVolts === null ? [] : [r.outputPeakVolts]))),
    failedRuns: sorted.filter((r) => !r.biased).map((r) => ({ run: r.run, failures: r.failures })),
    cases: { low: caseRun('low'), nominal: caseRun('nominal'), high: caseRun('high') },
    results: sorted,
  };
}

/** All runs in one thread. */
export function spread(design: Design, runs: number, seed: number, options: SpreadOptions = {}): SpreadSummary {
  if (!(Number.isInteger(runs) && runs >= 1 && runs <= 100000)) throw new RangeError(`spread: runs must be an integer 1..100000 (got ${runs})`);
  const results: SpreadRun[] = [];
  for (let k = 0; k < runs; k++) results.push(spreadRun(design, seed, k, options));
  return summariseSpread(design, seed, results, options);
}
