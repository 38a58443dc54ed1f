// Power-supply estimate for a tube effect: transformer, rectifier, capacitor-input
// reservoir, RC filter chain, heater budget. Pure functions, no state.
//
// Method: the reservoir is solved by a time-stepped steady-state simulation of
// (ideal sine source + winding resistance + fixed diode drop) charging the
// reservoir capacitor against a constant-current load. Everything after the
// reservoir uses first-order RC formulas. See SUPPLY_APPROXIMATIONS.
// Rules of thumb this reproduces (common practice, tube amplifier design references, "Power supply", confirmed):
// DC ≈ 1.41 × Vrms at light load less diode drops, about 1.3 × at full load for
// a bridge; unloaded secondary 5-10 % above rating; ripple ≈ I/(2·f·C) full-wave.

import { nextCapacitorVoltageRating, nextResistorWattage, type RatingResult } from '../parts/ratings.ts';

// The transformer and rectifier types live with the design (circuit/supply-types.ts).
import type { RectifierSpec, RectifierTopology, SecondarySpec } from '../circuit/supply-types.ts';
export type { RectifierSpec, RectifierTopology, SecondarySpec } from '../circuit/supply-types.ts';

export interface FilterStage {
  /** Series dropping resistor from the previous node, ohms. */
  readonly droppingOhms: number;
  /** Shunt capacitor at this node, farads. */
  readonly farads: number;
  /** DC drawn at this node (tube plate/screen currents), amperes. */
  readonly loadAmps: number;
  /** Optional rating of the capacitor, volts; checked against the unloaded B+. */
  readonly ratedVolts?: number;
  readonly label?: string;
}

export interface HeaterLoad {
  readonly volts: number;
  readonly amps: number;
  readonly label?: string;
}

export interface SupplyInput {
  readonly secondary: SecondarySpec;
  readonly rectifier: RectifierSpec;
  readonly mainsHertz: 50 | 60;
  readonly reservoirFarads: number;
  /** Optional rating of the reservoir capacitor, volts. */
  readonly reservoirRatedVolts?: number;
  /** DC drawn directly at the reservoir node, amperes; default 0. */
  readonly reservoirLoadAmps?: number;
  readonly stages: readonly FilterStage[];
  readonly heaters?: readonly HeaterLoad[];
  readonly heaterWinding?: { readonly volts: number; readonly amps: number };
}

export interface RippleHarmonic {
  /** Multiple of the ripple frequency (1 = fundamental). */
  readonly harmonic: number;
  readonly amplitudeVolts: number;
  /** Phase of a cosine term, radians; t = 0 at a mains zero crossing. */
  readonly phaseRadians: number;
}

export interface SupplyNode {
  readonly label: string;
  /** Mean DC at the node, volts. */
  readonly dcVolts: number;
  readonly ripplePeakToPeakVolts: number;
  readonly rippleHarmonics: readonly RippleHarmonic[];
  /** Incremental DC source resistance seen by a load at this node, ohms. */
  readonly sourceOhms: number;
  /** dcVolts + sourceOhms × this node's own loadAmps: a linear Thevenin source for a model. */
  readonly theveninVolts: number;
  /** Current through the dropping resistor into this node (all downstream load), amperes. */
  readonly throughAmps: number;
  readonly loadAmps: number;
  readonly capacitorFarads: number;
  /** Rating to buy for the capacitor: it sees the unloaded B+ at switch-on. */
  readonly capacitorRating: RatingResult;
  readonly droppingOhms: number;
  readonly droppingResistorWatts: number;
  readonly resistorRating: RatingResult;
}

export interface HeaterBudget {
  readonly totalAmps: number;
  readonly windingAmps: number;
  readonly windingVolts: number;
  readonly usedFraction: number;
  readonly currentOk: boolean;
  readonly voltageMismatches: readonly string[];
  readonly pass: boolean;
}

export interface SupplyEstimate {
  /** Peak of the unloaded secondary less diode drops, volts. */
  readonly unloadedVolts: number;
  readonly mainsHertz: number;
  /** 2 × mains for full-wave, = mains for half-wave. */
  readonly rippleHertz: number;
  readonly windingOhms: number;
  /** Simulated RMS winding current (per half for 'full-wave-ct'), amperes. */
  readonly windingRmsAmps: number;
  readonly totalLoadAmps: number;
  /** Handbook estimate I/(2fC) (full-wave) or I/(fC) (half-wave), volts peak-to-peak. */
  readonly formulaRippleVolts: number;
  /** Incremental source resistance at the reservoir, ohms. */
  readonly sourceOhms: number;
  /** Index 0 is the reservoir; index k is filter stage k. */
  readonly nodes: readonly SupplyNode[];
  readonly heater: HeaterBudget | null;
  readonly warnings: readonly string[];
  readonly notes: readonly string[];
}

export const SUPPLY_APPROXIMATIONS: readonly string[] = [
  'Transformer: ideal sine of √2·Vrms·(1+regulation) behind one secondary-referred resistance; leakage inductance and core effects ignored.',
  'Winding resistance, when not given, is regulation × Vrms / rated RMS amps.',
  'Diodes: fixed forward drop while conducting (silicon 1.0 V default; tube rectifier as stated), no recovery.',
  'Loads are constant DC currents; tube current does not follow B+ in this estimate.',
  'Reservoir: steady state of a time-stepped (backward Euler) simulation; DC, ripple and harmonics come from it.',
  'RC stages: each harmonic is scaled by 1/(1 + j·2π·f·R·C) (≈ 1/(2π·f·R·C) when large), loading by the next stage ignored.',
  'Source resistance: reservoir slope from a second simulation at a slightly higher load, plus the dropping resistors.',
];

const STEPS_PER_MAINS_CYCLE = 4000;
const MAX_MAINS_CYCLES = 600;
const HARMONIC_COUNT = 24;
const RESERVOIR_RIPPLE_WARN_FRACTION = 0.1; // project threshold
const STAGE_RIPPLE_WARN_FRACTION = 0.01; // project threshold

function need(cond: boolean, message: string): void {
  if (!cond) throw new RangeError(`estimateSupply: ${message}`);
}

function finitePositive(x: number): boolean {
  return Number.isFinite(x) && x > 0;
}

interface ReservoirSim {
  readonly meanVolts: number;
  readonly minVolts: number;
  readonly maxVolts: number;
  readonly windingRmsAmps: number;
  readonly windingMeanAmps: number;
  /** One ripple period of the reservoir voltage, volts. */
  readonly period: Float64Array;
}

interface SimParams {
  readonly peakVolts: number; // open-circuit secondary peak
  readonly dropVolts: number; // total rectifier drop in the conducting path
  readonly windingOhms: number;
  readonly farads: number;
  readonly mainsHertz: number;
  readonly topology: RectifierTopology;
}

function simulateReservoir(p: SimParams, loadAmps: number): ReservoirSim {
  const n = STEPS_PER_MAINS_CYCLE;
  const dt = 1 / (p.mainsHertz * n);
  const a = dt / p.farads;
  const k = dt / (p.windingOhms * p.farads);
  const halfWave = p.topology === 'half-wave';
  let v = Math.max(0, p.peakVolts - p.dropVolts);
  let prevMean = Number.NaN;
  const periodSteps = halfWave ? n : n / 2;
  const period = new Float64Array(periodSteps);
  let sumI2 = 0;
  let sumI = 0;
  let sumV: number;
  for (let cycle = 0; cycle < MAX_MAINS_CYCLES; cycle++) {
    sumI2 = 0;
    sumI = 0;
    sumV = 0;
    for (let s = 0; s < n; s++) {
      const src = p.peakVolts * Math.sin((2 * Math.PI * (s + 1)) / n);
      const drive = (halfWave ? src : Math.abs(src)) - p.dropVolts;
      let i = 0;
      const cand = (v + a * (drive / p.windingOhms - loadAmps)) / (1 + k);
      if (drive - cand > 0) {
        i = (drive - cand) / p.windingOhms;
        v = cand;
      } else {
        v = v - a * loadAmps;
      }
      if (v < 0) v = 0;
      sumI2 += i * i;
      sumI += i;
      sumV += v;
      if (s >= n - periodSteps) period[s - (n - periodSteps)] = v;
    }
    const mean = sumV / n;
    if (Math.abs(mean - prevMean) <= 1e-7 * Math.max(1, Math.abs(mean))) break;
    prevMean = mean;
  }
  let minV = Number.POSITIVE_INFINITY;
  let maxV = Number.NEGATIVE_INFINITY;
  let pm = 0;
  for (const x of period) {
    if (x < minV) minV = x;
    if (x > maxV) maxV = x;
    pm += x;
  }
  // per half for a centre-tapped winding: each half carries alternate pulses
  const meanI2 = sumI2 / n;
  const windingRmsAmps = Math.sqrt(p.topology === 'full-wave-ct' ? meanI2 / 2 : meanI2);
  return {
    meanVolts: pm / periodSteps,
    minVolts: minV,
    maxVolts: maxV,
    windingRmsAmps,
    windingMeanAmps: sumI / n,
    period,
  };
}

function harmonicsOf(period: Float64Array): RippleHarmonic[] {
  const m = period.length;
  const out: RippleHarmonic[] = [];
  for (let h = 1; h <= HARMONIC_COUNT; h++) {
    let re = 0;
    let im = 0;
    for (let j = 0; j < m; j++) {
      const th = (2 * Math.PI * h * (j + 1)) / m; // sample j sits at step j+1
      const x = period[j] ?? 0;
      re += x * Math.cos(th);
      im += x * Math.sin(th);
    }
    re *= 2 / m;
    im *= 2 / m;
    out.push({ harmonic: h, amplitudeVolts: Math.hypot(re, im), phaseRadians: Math.atan2(-im, re) });
  }
  return out;
}

function peakToPeakOf(harmonics: readonly RippleHarmonic[]): number {
  const points = 1024;
  let lo = Number.POSITIVE_INFINITY;
  let hi = Number.NEGATIVE_INFINITY;
  for (let j = 0; j < points; j++) {
    const th = (2 * Math.PI * j) / points;
    let x = 0;
    for (const h of harmonics) x += h.amplitudeVolts * Math.cos(h.harmonic * th + h.phaseRadians);
    if (x < lo) lo = x;
    if (x > hi) hi = x;
  }
  return hi - lo;
}

function fmt(x: number, digits = 3): string {
  return Number(x.toPrecision(digits)).toString();
}

/** Estimate a tube-effect power supply. Throws RangeError (one line) on bad input. */
export function estimateSupply(input: SupplyInput): SupplyEstimate {
  const sec = input.secondary;
  const rect = input.rectifier;
  need(finitePositive(sec.rmsVolts), `secondary.rmsVolts must be > 0, got ${String(sec.rmsVolts)}`);
  need(finitePositive(sec.ratedAmps), `secondary.ratedAmps must be > 0, got ${String(sec.ratedAmps)}`);
  const regulation = sec.regulationFraction ?? 0.07;
  need(Number.isFinite(regulation) && regulation >= 0 && regulation < 1, `secondary.regulationFraction must be in [0, 1), got ${String(regulation)}`);
  need(input.mainsHertz === 50 || input.mainsHertz === 60, `mainsHertz must be 50 or 60, got ${String(input.mainsHertz)}`);
  need(finitePositive(input.reservoirFarads), `reservoirFarads must be > 0, got ${String(input.reservoirFarads)}`);
  need(
    rect.topology === 'bridge' || rect.topology === 'full-wave-ct' || rect.topology === 'half-wave',
    `rectifier.topology must be bridge, full-wave-ct or half-wave, got ${String(rect.topology)}`,
  );
  const dropEach = rect.diode === 'silicon' ? (rect.dropVolts ?? 1.0) : rect.dropVolts;
  need(Number.isFinite(dropEach) && dropEach >= 0, `rectifier.dropVolts must be ≥ 0, got ${String(dropEach)}`);
  const reservoirLoad = input.reservoirLoadAmps ?? 0;
  need(Number.isFinite(reservoirLoad) && reservoirLoad >= 0, `reservoirLoadAmps must be ≥ 0, got ${String(reservoirLoad)}`);
  input.stages.forEach((s, i) => {
    need(Number.isFinite(s.droppingOhms) && s.droppingOhms >= 0, `stage ${i + 1} droppingOhms must be ≥ 0, got ${String(s.droppingOhms)}`);
    need(finitePositive(s.farads), `stage ${i + 1} farads must be > 0, got ${String(s.farads)}`);
    need(Number.isFinite(s.loadAmps) && s.loadAmps >= 0, `stage ${i + 1} loadAmps must be ≥ 0, got ${String(s.loadAmps)}`);
  });

  const windingOhms = sec.windingOhms ?? (regulation * sec.rmsVolts) / sec.ratedAmps;
  need(finitePositive(windingOhms), `winding resistance must be > 0 (give windingOhms or a regulationFraction > 0), got ${String(windingOhms)}`);

  const diodesInPath = rect.topology === 'bridge' ? 2 : 1;
  const dropVolts = diodesInPath * dropEach;
  const peakVolts = Math.SQRT2 * sec.rmsVolts * (1 + regulation);
  const unloadedVolts = Math.max(0, peakVolts - dropVolts);
  const fullWave = rect.topology !== 'half-wave';
  const rippleHertz = fullWave ? 2 * input.mainsHertz : input.mainsHertz;

  // currents: through[k] = current in dropping resistor k (all load at and after node k)
  const stageCount = input.stages.length;
  const through = new Array<number>(stageCount + 1).fill(0);
  let acc = 0;
  for (let k = stageCount; k >= 1; k--) {
    acc += input.stages[k - 1]?.loadAmps ?? 0;
    through[k] = acc;
  }
  const totalLoadAmps = acc + reservoirLoad;
  through[0] = totalLoadAmps;

  const params: SimParams = {
    peakVolts,
    dropVolts,
    windingOhms,
    farads: input.reservoirFarads,
    mainsHertz: input.mainsHertz,
    topology: rect.topology,
  };
  const sim = simulateReservoir(params, totalLoadAmps);
  const delta = Math.max(1e-4, 0.02 * totalLoadAmps);
  const simUp = simulateReservoir(params, totalLoadAmps + delta);
  const reservoirSourceOhms = Math.max(0, (sim.meanVolts - simUp.meanVolts) / delta);

  const warnings: string[] = [];
  const notes: string[] = [...SUPPLY_APPROXIMATIONS];
  const formulaRippleVolts = totalLoadAmps / ((fullWave ? 2 : 1) * input.mainsHertz * input.reservoirFarads);

  // nodes
  const resHarmonics = harmonicsOf(sim.period);
  const nodes: SupplyNode[] = [];
  const capRatingFor = (): RatingResult => nextCapacitorVoltageRating(unloadedVolts);
  nodes.push({
    label: 'reservoir',
    dcVolts: sim.meanVolts,
    ripplePeakToPeakVolts: sim.maxVolts - sim.minVolts,
    rippleHarmonics: resHarmonics,
    sourceOhms: reservoirSourceOhms,
    theveninVolts: sim.meanVolts + reservoirSourceOhms * reservoirLoad,
    throughAmps: totalLoadAmps,
    loadAmps: reservoirLoad,
    capacitorFarads: input.reservoirFarads,
    capacitorRating: capRatingFor(),
    droppingOhms: 0,
    droppingResistorWatts: 0,
    resistorRating: nextResistorWattage(0),
  });
  let prev = resHarmonics;
  let v = sim.meanVolts;
  let rs = reservoirSourceOhms;
  for (let k = 1; k <= stageCount; k++) {
    const st = input.stages[k - 1];
    if (st === undefined) break;
    const iThrough = through[k] ?? 0;
    v = Math.max(0, v - st.droppingOhms * iThrough);
    rs += st.droppingOhms;
    const harmonics = prev.map((h) => {
      const wrc = 2 * Math.PI * h.harmonic * rippleHertz * st.droppingOhms * st.farads;
      return {
        harmonic: h.harmonic,
        amplitudeVolts: h.amplitudeVolts / Math.sqrt(1 + wrc * wrc),
        phaseRadians: h.phaseRadians - Math.atan(wrc),
      };
    });
    const watts = iThrough * iThrough * st.droppingOhms;
    nodes.push({
      label: st.label ?? `stage ${k}`,
      dcVolts: v,
      ripplePeakToPeakVolts: peakToPeakOf(harmonics),
      rippleHarmonics: harmonics,
      sourceOhms: rs,
      theveninVolts: v + rs * st.loadAmps,
      throughAmps: iThrough,
      loadAmps: st.loadAmps,
      capacitorFarads: st.farads,
      capacitorRating: capRatingFor(),
      droppingOhms: st.droppingOhms,
      droppingResistorWatts: watts,
      resistorRating: nextResistorWattage(watts),
    });
    prev = harmonics;
  }

  // warnings
  if (sim.windingRmsAmps > sec.ratedAmps) {
    warnings.push(
      `transformer overloaded: ${fmt(sim.windingRmsAmps * 1000)} mA RMS in the winding${rect.topology === 'full-wave-ct' ? ' (each half)' : ''} vs ${fmt(sec.ratedAmps * 1000)} mA rating`,
    );
  }
  if (sim.minVolts <= 0) warnings.push(`supply collapses: ${fmt(totalLoadAmps * 1000)} mA is more than this transformer and reservoir can deliver`);
  if (rect.topology === 'half-wave') warnings.push('half-wave rectifier puts DC through the winding (core saturation risk, common practice)');
  const res = nodes[0];
  if (res !== undefined && res.dcVolts > 0 && res.ripplePeakToPeakVolts > RESERVOIR_RIPPLE_WARN_FRACTION * res.dcVolts) {
    warnings.push(`reservoir ripple large: ${fmt(res.ripplePeakToPeakVolts)} V p-p on ${fmt(res.dcVolts)} V (over 10 %); use a larger reservoir capacitor`);
  }
  for (const nd of nodes.slice(1)) {
    if (nd.dcVolts > 0 && nd.ripplePeakToPeakVolts > STAGE_RIPPLE_WARN_FRACTION * nd.dcVolts) {
      warnings.push(`${nd.label} ripple large: ${fmt(nd.ripplePeakToPeakVolts)} V p-p on ${fmt(nd.dcVolts)} V (over 1 %)`);
    }
  }
  const capNeed = nextCapacitorVoltageRating(unloadedVolts);
  if (capNeed.ok) {
    notes.push(
      `capacitor voltage: every filter capacitor sees the unloaded ${fmt(unloadedVolts)} V at switch-on; buy ${String(capNeed.rating)} V or more (80 % derating)`,
    );
  } else {
    warnings.push(`capacitor voltage: ${capNeed.reason}`);
  }
  const ratedChecks: { readonly label: string; readonly rated: number | undefined }[] = [
    { label: 'reservoir', rated: input.reservoirRatedVolts },
    ...input.stages.map((s, i) => ({ label: s.label ?? `stage ${i + 1}`, rated: s.ratedVolts })),
  ];
  for (const c of ratedChecks) {
    if (c.rated !== undefined && unloadedVolts > 0.8 * c.rated) {
      warnings.push(`${c.label} capacitor rated ${fmt(c.rated)} V is too low for the unloaded ${fmt(unloadedVolts)} V (keep under 80 % of rating)`);
    }
  }
  for (const nd of nodes.slice(1)) {
    if (!nd.resistorRating.ok) warnings.push(`${nd.label} dropping resistor: ${nd.resistorRating.reason}`);
  }

  // heaters
  let heater: HeaterBudget | null = null;
  if (input.heaterWinding !== undefined) {
    const w = input.heaterWinding;
    need(finitePositive(w.volts) && finitePositive(w.amps), `heaterWinding volts and amps must be > 0`);
    const list = input.heaters ?? [];
    let total = 0;
    const mismatches: string[] = [];
    list.forEach((h, i) => {
      need(finitePositive(h.volts) && Number.isFinite(h.amps) && h.amps >= 0, `heater ${i + 1} needs volts > 0 and amps ≥ 0`);
      total += h.amps;
      if (Math.abs(h.volts - w.volts) > 0.05 * w.volts) {
        mismatches.push(`${h.label ?? `heater ${i + 1}`} wants ${fmt(h.volts)} V, winding gives ${fmt(w.volts)} V`);
      }
    });
    const currentOk = total <= w.amps * (1 + 1e-12);
    heater = {
      totalAmps: total,
      windingAmps: w.amps,
      windingVolts: w.volts,
      usedFraction: total / w.amps,
      currentOk,
      voltageMismatches: mismatches,
      pass: currentOk && mismatches.length === 0,
    };
    if (!currentOk) warnings.push(`heater winding overloaded: ${fmt(total)} A drawn vs ${fmt(w.amps)} A rating`);
    for (const m of mismatches) warnings.push(`heater voltage: ${m}`);
  } else if ((input.heaters ?? []).length > 0) {
    warnings.push('heaters listed but no heaterWinding given: heater budget not checked');
  }

  return {
    unloadedVolts,
    mainsHertz: input.mainsHertz,
    rippleHertz,
    windingOhms,
    windingRmsAmps: sim.windingRmsAmps,
    totalLoadAmps,
    formulaRippleVolts,
    sourceOhms: reservoirSourceOhms,
    nodes,
    heater,
    warnings,
    notes,
  };
}

/**
 * Ripple (AC part, zero mean) at a node as audio-rate samples, for injecting hum
 * into a model's B+. Built from the node's harmonics (of the simulated reservoir
 * waveform, filtered by each RC stage) below 0.45 × sampleRateHz.
 * The default 1 s holds a whole number of ripple periods (ripple is 50, 60, 100
 * or 120 Hz), so the buffer loops without a click.
 */
export function rippleWaveform(estimate: SupplyEstimate, nodeIndex: number, sampleRateHz: number, seconds = 1): Float64Array {
  const node = estimate.nodes[nodeIndex];
  if (node === undefined) {
    throw new RangeError(`rippleWaveform: nodeIndex ${String(nodeIndex)} out of range 0..${estimate.nodes.length - 1}`);
  }
  if (!finitePositive(sampleRateHz)) throw new RangeError(`rippleWaveform: sampleRateHz must be > 0, got ${String(sampleRateHz)}`);
  if (!finitePositive(seconds) || seconds > 60) throw new RangeError(`rippleWaveform: seconds must be in (0, 60], got ${String(seconds)}`);
  const count = Math.max(1, Math.round(seconds * sampleRateHz));
  const out = new Float64Array(count);
  const usable = node.rippleHarmonics.filter((h) => h.harmonic * estimate.rippleHertz < 0.45 * sampleRateHz);
  for (const h of usable) {
    const w = (2 * Math.PI * h.harmonic * estimate.rippleHertz) / sampleRateHz;
    for (let j = 0; j < count; j++) out[j] = (out[j] ?? 0) + h.amplitudeVolts * Math.cos(w * j + h.phaseRadians);
  }
  return out;
}
