// Loudness-matched pairs (A/B or dry/processed) from one DI take, and the sheet that documents
// them. Pure functions and one streaming renderer; no Node APIs, so the UI can build a pack
// from in-memory renders (buildPairPack) and the CLI can stream long files (commands/pair.ts).
//
// Matching: integrated loudness per ITU-R BS.1770-4 (the project's LoudnessMeter), true peak
// per its Annex 2 (4x). Gains are plain linear factors on the rendered float signal: no
// limiter, so the two files differ only by a constant gain from their renders.

import { measureLoudness, type LoudnessReport } from '../analysis/loudness.ts';
import type { Design } from '../circuit/design.ts';
import type { EngineCircuit, OperatingPoint, TubeOperatingPoint } from '../circuit/engine.ts';
import type { Netlist } from '../circuit/netlist.ts';
import { formatValue } from '../parts/values.ts';
import { ratingsSheet, type RatingsSheet } from '../analysis/ratings-sheet.ts';
import type { OversamplingFactor } from '../oversampling/oversampler.ts';
import { estimateOutputVoltsAtFullScale } from './levelling.ts';
import { OversampledCircuit } from './oversampled.ts';

export type PairVariant = 'a' | 'b' | 'dry';

/** What the matcher needs from a measurement (a LoudnessReport has it). */
export interface PairLoudness {
  readonly integratedLufs: number;
  readonly truePeakDbtp: number;
}

export interface PairMatchOptions {
  /** Common integrated loudness; absent: the quieter file's loudness. */
  readonly targetLufs?: number;
  /** True-peak ceiling, dB TP. Default -1 (EBU R128 maximum true peak). */
  readonly ceilingDbtp?: number;
}

export const DEFAULT_PEAK_CEILING_DBTP = -1;
/** Matching tolerance promised to users (LU). */
export const PAIR_TOLERANCE_LU = 0.1;
/** Residual we aim for before accepting a pass (well inside the promise). */
export const PAIR_AIM_LU = 0.01;
/** Headroom kept under the ceiling for output quantisation (a few LSB at 24 bit, bounded by far). */
export const CEILING_MARGIN_DB = 0.001;

export interface PairGainPlan {
  /** Common loudness the two files are brought to (LUFS). */
  readonly commonLufs: number;
  /** Loudness asked for: the target, or the quieter file's. */
  readonly requestedLufs: number;
  readonly reference: 'target' | 'quieter';
  readonly gainsDb: readonly [number, number];
  readonly gains: readonly [number, number];
  /** True when the ceiling forced both files below the requested loudness. */
  readonly ceilingBound: boolean;
  /** requestedLufs - commonLufs (0 when the ceiling did not bind). */
  readonly ceilingReductionDb: number;
  readonly ceilingDbtp: number;
}

function checkMeasured(m: PairLoudness, which: number): void {
  if (!Number.isFinite(m.integratedLufs)) {
    throw new Error(`file ${which + 1} of the pair is silent (no 400 ms block above the -70 LUFS gate): cannot match loudness`);
  }
  if (!Number.isFinite(m.truePeakDbtp)) throw new Error(`file ${which + 1} of the pair has no measurable true peak`);
}

/**
 * Gains that bring both files to one integrated loudness (the target, or the quieter file's)
 * and keep both true peaks at or under the ceiling. If the ceiling binds for either file, both
 * come down by the same amount, so they still match; neither is limited.
 */
export function planPairGains(measured: readonly [PairLoudness, PairLoudness], options: PairMatchOptions = {}): PairGainPlan {
  const ceilingDbtp = options.ceilingDbtp ?? DEFAULT_PEAK_CEILING_DBTP;
  if (!Number.isFinite(ceilingDbtp) || ceilingDbtp > 0) throw new Error(`peak ceiling must be 0 dBTP or lower (got ${ceilingDbtp})`);
  if (options.targetLufs !== undefined && !(options.targetLufs < 0 && options.targetLufs > -70)) {
    throw new Error(`target loudness must be between -70 and 0 LUFS (got ${options.targetLufs})`);
  }
  measured.forEach(checkMeasured);
  const [ma, mb] = measured;
  const requestedLufs = options.targetLufs ?? Math.min(ma.integratedLufs, mb.integratedLufs);
  // Highest common loudness at which file i stays under the ceiling (true peak scales with gain).
  const limitA = ma.integratedLufs + (ceilingDbtp - CEILING_MARGIN_DB - ma.truePeakDbtp);
  const limitB = mb.integratedLufs + (ceilingDbtp - CEILING_MARGIN_DB - mb.truePeakDbtp);
  const commonLufs = Math.min(requestedLufs, limitA, limitB);
  const gainsDb = [commonLufs - ma.integratedLufs, commonLufs - mb.integratedLufs] as const;
  const ceilingReductionDb = requestedLufs - commonLufs;
  return {
    commonLufs,
    requestedLufs,
    reference: options.targetLufs === undefined ? 'quieter' : 'target',
    gainsDb,
    gains: [10 ** (gainsDb[0] / 20), 10 ** (gainsDb[1] / 20)],
    ceilingBound: ceilingReductionDb > 1e-9,
    ceilingReductionDb: Math.max(0, ceilingReductionDb),
    ceilingDbtp,
  };
}

export interface PairCheck {
  /** |L_a - L_b| of the final files (LU). */
  readonly differenceLu: number;
  /** Largest |L_i - commonLufs| (LU). */
  readonly offTargetLu: number;
  readonly underCeiling: boolean;
  /** Within PAIR_AIM_LU of the plan and under the ceiling: nothing to correct. */
  readonly settled: boolean;
}

export function checkPair(plan: PairGainPlan, final: readonly [PairLoudness, PairLoudness]): PairCheck {
  const [fa, fb] = final;
  const differenceLu = Math.abs(fa.integratedLufs - fb.integratedLufs);
  const offTargetLu = Math.max(Math.abs(fa.integratedLufs - plan.commonLufs), Math.abs(fb.integratedLufs - plan.commonLufs));
  const underCeiling = fa.truePeakDbtp <= plan.ceilingDbtp && fb.truePeakDbtp <= plan.ceilingDbtp;
  return { differenceLu, offTargetLu, underCeiling, settled: underCeiling && offTargetLu <= PAIR_AIM_LU && Number.isFinite(differenceLu) };
}

/**
 * A corrected plan after measuring the files made with `plan`. Gating (the -70 LUFS absolute
 * gate is not scale-invariant) and quantisation can move a file's loudness slightly off the
 * prediction; each gain is corrected by its residual, and both are lowered together if a true
 * peak ended above the ceiling.
 */
export function correctPairGains(plan: PairGainPlan, final: readonly [PairLoudness, PairLoudness]): PairGainPlan {
  final.forEach(checkMeasured);
  const over = Math.max(0, final[0].truePeakDbtp - (plan.ceilingDbtp - CEILING_MARGIN_DB), final[1].truePeakDbtp - (plan.ceilingDbtp - CEILING_MARGIN_DB));
  const commonLufs = plan.commonLufs - over;
  const gainsDb = [
    plan.gainsDb[0] + (plan.commonLufs - final[0].integratedLufs) - over,
    plan.gainsDb[1] + (plan.commonLufs - final[1].integratedLufs) - over,
  ] as const;
  const ceilingReductionDb = Math.max(0, plan.requestedLufs - commonLufs);
  return {
    ...plan,
    commonLufs,
    gainsDb,
    gains: [10 ** (gainsDb[0] / 20), 10 ** (gainsDb[1] / 20)],
    ceilingBound: plan.ceilingBound || over > 0,
    ceilingReductionDb,
  };
}

/** One sentence for the sheet on how the pair was levelled. */
export function describePlan(plan: PairGainPlan, labels: readonly [string, string]): string {
  const asked =
    plan.reference === 'target' ? `the target ${plan.requestedLufs.toFixed(1)} LUFS` : `the quieter file's loudness (${plan.requestedLufs.toFixed(2)} LUFS)`;
  const g = `gains ${labels[0]} ${fmtDb(plan.gainsDb[0])} dB, ${labels[1]} ${fmtDb(plan.gainsDb[1])} dB`;
  if (!plan.ceilingBound) return `Both files brought to ${asked}; the ${plan.ceilingDbtp} dBTP ceiling did not bind; ${g}; no limiting.`;
  return `Both files were to go to ${asked}, but that would put a true peak over the ${plan.ceilingDbtp} dBTP ceiling, so both were lowered by the same ${plan.ceilingReductionDb.toFixed(2)} dB to ${plan.commonLufs.toFixed(2)} LUFS and still match; ${g}; no limiting.`;
}

function fmtDb(x: number): string {
  return `${x >= 0 ? '+' : ''}${x.toFixed(2)}`;
}

// ---------------------------------------------------------------------------------------------
// Output format and quantisation (same rounding and clamping as src/dsp/io/wav.ts encodeFrameBlock)

export interface PairOutputFormat {
  readonly bitDepth: 24 | 32;
  readonly float: boolean;
}
export const PCM24: PairOutputFormat = { bitDepth: 24, float: false };
export const FLOAT32: PairOutputFormat = { bitDepth: 32, float: true };

/**
 * dst[k] = the value a decoder reads back after src[k] * gain is written in `format`
 * (24-bit: round to the nearest of 2^23 steps, clamp to [-1, 1 - 2^-23]; float: Math.fround).
 * Non-finite products become 0. Allocates nothing.
 */
export function quantiseBlock(src: ArrayLike<number>, n: number, gain: number, format: PairOutputFormat, dst: Float32Array | Float64Array): void {
  if (format.float) {
    for (let k = 0; k < n; k++) {
      const y = (src[k] ?? 0) * gain;
      dst[k] = Number.isFinite(y) ? Math.fround(y) : 0;
    }
    return;
  }
  const full = 8388608;
  const max = full - 1;
  for (let k = 0; k < n; k++) {
    const y = (src[k] ?? 0) * gain;
    let q = Number.isFinite(y) ? Math.round(y * full) : 0;
    if (q > max) q = max;
    else if (q < -full) q = -full;
    dst[k] = q / full;
  }
}

// ---------------------------------------------------------------------------------------------
// Latency-aligned rendering

/**
 * A design rendered at `factor` x oversampling, levelled like `valvewright render` (input file
 * value 1.0 = inputVoltsAtFullScale volts at the input; output divided by
 * estimateOutputVoltsAtFullScale) but with no limiter, and advanced by the oversampler's
 * latency rounded to whole samples, so output sample k lines up with input sample k
 * (OversampledCircuit.latencySamples; the residual is under half a sample). The first
 * `advanceSamples` outputs are dropped and the same number of zeros are fed at the end
 * (flush), so the output has exactly as many samples as the input.
 */
export class AlignedRender {
  readonly model: OversampledCircuit;
  readonly advanceSamples: number;
  readonly latencySamples: number;
  readonly outputVoltsAtFullScale: number;
  private readonly inputVolts: number;
  private readonly outScale: number;
  private toSkip: number;
  private framesIn = 0;
  nonFiniteSamples = 0;

  constructor(circuit: EngineCircuit | Netlist, sampleRateHz: number, factor: OversamplingFactor, inputVoltsAtFullScale: number) {
    if (!(inputVoltsAtFullScale > 0 && Number.isFinite(inputVoltsAtFullScale)))
      throw new Error(`input volts at full scale must be positive (got ${inputVoltsAtFullScale})`);
    this.model = new OversampledCircuit(circuit, sampleRateHz, factor);
    this.latencySamples = this.model.latencySamples;
    this.advanceSamples = Math.round(this.latencySamples);
    this.toSkip = this.advanceSamples;
    this.inputVolts = inputVoltsAtFullScale;
    this.outputVoltsAtFullScale = estimateOutputVoltsAtFullScale(circuit, sampleRateHz, inputVoltsAtFullScale);
    this.outScale = 1 / this.outputVoltsAtFullScale;
  }

  private one(vin: number): number {
    const y = this.model.processSample(vin) * this.outScale;
    if (Number.isFinite(y)) return y;
    this.nonFiniteSamples++;
    return 0;
  }

  /** n input samples (file units) in; aligned output samples written to out from 0; returns how many. */
  process(input: ArrayLike<number>, n: number, out: Float32Array | Float64Array): number {
    let w = 0;
    for (let k = 0; k < n; k++) {
      const y = this.one((input[k] ?? 0) * this.inputVolts);
      if (this.toSkip > 0) this.toSkip--;
      else out[w++] = y;
    }
    this.framesIn += n;
    return w;
  }

  /** After the last input: the remaining outputs (at most advanceSamples), driven by silence. */
  flush(out: Float32Array | Float64Array): number {
    const owed = Math.min(this.advanceSamples, this.framesIn);
    let w = 0;
    for (let k = 0; k < this.advanceSamples && w < owed; k++) {
      const y = this.one(0);
      if (this.toSkip > 0) this.toSkip--;
      else out[w++] = y;
    }
    return w;
  }
}

/** Whole-signal version of AlignedRender (output length = input length). */
export function renderAligned(
  circuit: EngineCircuit | Netlist,
  input: ArrayLike<number>,
  sampleRateHz: number,
  factor: OversamplingFactor,
  inputVoltsAtFullScale: number,
  onProgress?: (fraction: number) => void,
): { samples: Float32Array; render: AlignedRender } {
  const r = new AlignedRender(circuit, sampleRateHz, factor, inputVoltsAtFullScale);
  const out = new Float32Array(input.length);
  const block = 4096;
  const tmp = new Float64Array(block + r.advanceSamples);
  const chunk = new Float64Array(block);
  let w = 0;
  for (let f = 0; f < input.length; f += block) {
    const n = Math.min(block, input.length - f);
    for (let k = 0; k < n; k++) chunk[k] = input[f + k] ?? 0;
    const got = r.process(chunk, n, tmp);
    for (let k = 0; k < got; k++) out[w++] = tmp[k] ?? 0;
    onProgress?.((f + n) / input.length);
  }
  const got = r.flush(tmp);
  for (let k = 0; k < got; k++) out[w++] = tmp[k] ?? 0;
  return { samples: out, render: r };
}

// ---------------------------------------------------------------------------------------------
// Names

/** Lower-case ASCII words joined by hyphens ("Hearthstone (pentode front)" -> "hearthstone-pentode-front"). */
export function slugify(name: string): string {
  const s = name
    .normalize('NFKD')
    .replace(/[\u0300-\u036f]/g, '')
    .toLowerCase()
    .replace(/[^a-z0-9]+/g, '-')
    .replace(/^-+|-+$/g, '');
  return s.slice(0, 60).replace(/-+$/, '') || 'untitled';
}

/** 48000 -> "48k", 44100 -> "44.1k", 22050 -> "22.05k", 8000 -> "8k". */
export function rateTag(sampleRateHz: number): string {
  const k = sampleRateHz / 1000;
  return `${Number(k.toFixed(3))}k`;
}

export function bitDepthTag(format: PairOutputFormat): string {
  return format.float ? '32float' : `${format.bitDepth}bit`;
}

/** e.g. "hearthstone-pentode-front.a.48k.24bit.wav". */
export function pairFileName(name: string, variant: PairVariant, sampleRateHz: number, format: PairOutputFormat): string {
  return `${slugify(name)}.${variant}.${rateTag(sampleRateHz)}.${bitDepthTag(format)}.wav`;
}

export const PAIR_SHEET_JSON = 'pair-sheet.json';
export const PAIR_SHEET_MD = 'pair-sheet.md';

export const HIGH_VOLTAGE_CAUTION =
  'High voltage: tube circuits run at lethal voltages. Build and test them only with the training and precautions your local codes and licensed practice require; these clips and figures do not make a circuit safe.';

// ---------------------------------------------------------------------------------------------
// Design summary: component values, operating point, rating margins

export interface ComponentEntry {
  readonly id: string;
  readonly kind: string;
  readonly nodes: readonly string[];
  /** Formatted with formatValue, e.g. "220kΩ", "22nF", or the tube type. */
  readonly value: string;
  readonly detail?: string;
  readonly label?: string;
}

export type MarginCondition = 'warm' | 'cold' | 'max-input';

/** One rating against its worst case, from the ratings sheet (src/dsp/analysis/ratings-sheet.ts). */
export interface RatingMargin {
  readonly part: string;
  readonly type: string;
  readonly quantity: string;
  readonly unit: 'W' | 'V' | 'A';
  readonly value: number;
  readonly rating: number;
  readonly condition: MarginCondition;
  /** value / rating (1 = at the rating). */
  readonly fractionOfRating: number;
  /** rating - value. */
  readonly margin: number;
}

export interface PartBuyEntry {
  readonly part: string;
  readonly quantity: 'capacitor voltage' | 'resistor power';
  readonly worst: number;
  readonly unit: 'V' | 'W';
  readonly condition: MarginCondition;
  /** Next standard rating after derating, or null when none is large enough. */
  readonly buy: number | null;
}

function worstOf(c: { warm: number | null; cold?: number; maxInput: number | null }, withCold: boolean): { v: number; c: MarginCondition } | null {
  let best: { v: number; c: MarginCondition } | null = null;
  const consider = (v: number | null | undefined, cond: MarginCondition) => {
    if (v !== null && v !== undefined && Number.isFinite(v) && (!best || v > best.v)) best = { v, c: cond };
  };
  consider(c.warm, 'warm');
  consider(c.maxInput, 'max-input');
  if (withCold) consider(c.cold, 'cold');
  return best;
}

/**
 * Tube rating margins from the worst-case ratings sheet: plate and screen dissipation and
 * voltage hot (warm idle or maximum input), plate voltage cold (data sheets allow more cold,
 * so it is listed apart), cathode current, heater-cathode voltage over all conditions.
 */
export function ratingMargins(sheet: RatingsSheet): RatingMargin[] {
  const out: RatingMargin[] = [];
  for (const t of sheet.tubes) {
    const add = (quantity: string, unit: RatingMargin['unit'], w: { v: number; c: MarginCondition } | null, rating: number | null | undefined) => {
      if (!w || rating === null || rating === undefined || !(rating > 0) || !Number.isFinite(rating)) return;
      out.push({ part: t.id, type: t.type, quantity, unit, value: w.v, rating, condition: w.c, fractionOfRating: w.v / rating, margin: rating - w.v });
    };
    add('plate dissipation', 'W', worstOf(t.plateWatts, false), t.plateWatts.max);
    add('plate voltage (hot)', 'V', worstOf(t.plateVolts, false), t.plateVolts.max);
    add('plate voltage (cold start)', 'V', { v: t.plateVolts.cold, c: 'cold' }, t.plateVolts.max);
    if (t.screenWatts) add('screen dissipation', 'W', worstOf(t.screenWatts, false), t.screenWatts.max);
    if (t.screenVolts) add('screen voltage (hot)', 'V', worstOf(t.screenVolts, false), t.screenVolts.max);
    add('cathode current', 'A', worstOf(t.cathodeAmps, false), t.cathodeAmps.max);
    add('heater-cathode voltage', 'V', { v: t.heaterCathode.worstVolts, c: t.heaterCathode.worstCondition }, t.heaterCathode.max);
  }
  return out;
}

export function partBuyEntries(sheet: RatingsSheet): PartBuyEntry[] {
  return [
    ...sheet.capacitors.map((c): PartBuyEntry => ({
      part: c.id,
      quantity: 'capacitor voltage',
      worst: c.worstVolts,
      unit: 'V',
      condition: c.worstCondition,
      buy: c.buyVolts,
    })),
    ...sheet.resistors.map((r): PartBuyEntry => ({
      part: r.id,
      quantity: 'resistor power',
      worst: r.worstWatts,
      unit: 'W',
      condition: r.worstCondition,
      buy: r.buyWatts,
    })),
  ];
}

/** One tube's operating point as the sheet records it (the engine's own record). */
export type TubeOpEntry = TubeOperatingPoint;

export interface DesignSheetEntry {
  readonly name: string;
  readonly ref: string;
  readonly description?: string;
  readonly supply: { readonly volts: string; readonly ohms: string; readonly filterFarads: string };
  readonly input: { readonly node: string; readonly ohms: string };
  readonly output: { readonly node: string; readonly loadOhms: string };
  readonly components: readonly ComponentEntry[];
  readonly operatingPoint: { readonly nodes: Readonly<Record<string, number>>; readonly tubes: Readonly<Record<string, TubeOpEntry>> };
  readonly ratingMargins: readonly RatingMargin[];
  readonly partRatings: readonly PartBuyEntry[];
  readonly ratingFindings: readonly { readonly severity: string; readonly message: string }[];
  readonly ratingMarginsSource: string;
}

const fv = (v: number, unit: 'ohms' | 'farads' | 'volts') => formatValue(v, unit, { withUnit: true });

export function componentEntries(design: Design): ComponentEntry[] {
  return design.parts.map((p): ComponentEntry => {
    const base = { id: p.id, kind: p.kind, ...(p.label ? { label: p.label } : {}) };
    switch (p.kind) {
      case 'resistor':
        return {
          ...base,
          nodes: p.nodes,
          value: fv(p.ohms, 'ohms'),
          ...(p.tolerance !== undefined ? { detail: `±${+(p.tolerance * 100).toFixed(2)} %` } : {}),
        };
      case 'capacitor':
        return {
          ...base,
          nodes: p.nodes,
          value: fv(p.farads, 'farads'),
          ...(p.tolerance !== undefined || p.polarized
            ? { detail: [p.tolerance !== undefined ? `±${+(p.tolerance * 100).toFixed(2)} %` : '', p.polarized ? 'polarized' : ''].filter(Boolean).join(', ') }
            : {}),
        };
      case 'pot':
        return { ...base, nodes: p.nodes, value: fv(p.ohms, 'ohms'), detail: `${p.taper} taper at ${+(p.position * 100).toFixed(1)} %` };
      case 'switch':
        return { ...base, nodes: p.nodes, value: p.closed ? 'closed' : 'open' };
      case 'tube': {
        const nodes = [p.nodes.plate, p.nodes.grid, p.nodes.cathode, ...(p.nodes.screen ? [p.nodes.screen] : [])];
        return {
          ...base,
          nodes,
          value: p.type,
          detail: `sample ${p.sample}${p.heaterVolts !== undefined ? `, heater at ${p.heaterVolts} V` : ''} (nodes plate, grid, cathode${p.nodes.screen ? ', screen' : ''})`,
        };
      }
    }
  });
}

/** `ratings` defaults to ratingsSheet(design, { op }) (warm, cold start and maximum input). */
export function designSheetEntry(design: Design, ref: string, op: OperatingPoint, ratings: RatingsSheet = ratingsSheet(design, { op })): DesignSheetEntry {
  const tubes: Record<string, TubeOpEntry> = {};
  for (const [id, t] of Object.entries(op.tubes)) {
    tubes[id] = {
      kind: t.kind,
      plateAmps: t.plateAmps,
      plateWatts: t.plateWatts,
      gridAmps: t.gridAmps,
      screenAmps: t.screenAmps,
      screenWatts: t.screenWatts,
      cathodeAmps: t.cathodeAmps,
      vgk: t.vgk,
      vpk: t.vpk,
      vsk: t.vsk,
    };
  }
  return {
    name: design.name,
    ref,
    ...(design.description ? { description: design.description } : {}),
    supply: { volts: fv(design.supply.volts, 'volts'), ohms: fv(design.supply.ohms, 'ohms'), filterFarads: fv(design.supply.filterFarads, 'farads') },
    input: { node: design.input.node, ohms: fv(design.input.ohms, 'ohms') },
    output: { node: design.output.node, loadOhms: fv(design.output.loadOhms, 'ohms') },
    components: componentEntries(design),
    operatingPoint: { nodes: { ...op.nodes }, tubes },
    ratingMargins: ratingMargins(ratings),
    partRatings: partBuyEntries(ratings),
    ratingFindings: ratings.findings.map((f) => ({ severity: f.severity, message: f.message })),
    ratingMarginsSource: `worst case of warm idle, cold start (${ratings.conditions.coldSupplyVolts} V unloaded B+)${ratings.conditions.maxInput ? ` and maximum input (${ratings.conditions.maxInput.peakVolts} V peak at ${ratings.conditions.maxInput.frequenciesHz.join(' and ')} Hz)` : ''} against the tube library maximum ratings (src/dsp/analysis/ratings-sheet.ts)`,
  };
}

// ---------------------------------------------------------------------------------------------
// Sheet

export interface PairFileEntry {
  readonly variant: PairVariant;
  readonly file: string;
  /** Design name, or the DI's name for the dry file. */
  readonly source: string;
  readonly gainDb: number;
  readonly gain: number;
  readonly integratedLufs: number;
  readonly truePeakDbtp: number;
  readonly loudnessRangeLu: number;
  readonly samplePeakDbfs: number;
  readonly shortTermMaxLufs: number;
  /** Loudness and true peak of the render before the gain. */
  readonly renderedIntegratedLufs: number;
  readonly renderedTruePeakDbtp: number;
}

export interface PairSheet {
  readonly schema: 'valvewright.pair-sheet.v1';
  readonly caution: string;
  readonly commandLine?: string;
  readonly input: {
    readonly file: string;
    readonly sampleRateHz: number;
    readonly channelCount: number;
    readonly frames: number;
    readonly seconds: number;
    readonly integratedLufs: number | null;
    readonly truePeakDbtp: number | null;
    readonly loudnessRangeLu: number | null;
    readonly mixedToMono: boolean;
  };
  readonly render: {
    readonly oversample: number;
    readonly inputVoltsAtFullScale: number;
    readonly format: string;
    readonly latencyCompensation: string;
    readonly limiter: 'none';
  };
  readonly matching: {
    readonly reference: 'target' | 'quieter';
    readonly requestedLufs: number;
    readonly commonLufs: number;
    readonly ceilingDbtp: number;
    readonly ceilingBound: boolean;
    readonly ceilingReductionDb: number;
    readonly differenceLu: number;
    readonly underCeiling: boolean;
    readonly passes: number;
    readonly note: string;
  };
  readonly files: readonly PairFileEntry[];
  readonly designs: readonly DesignSheetEntry[];
}

export interface PairSideInfo {
  readonly variant: PairVariant;
  readonly file: string;
  readonly source: string;
  readonly rendered: LoudnessReport;
  readonly final: LoudnessReport;
}

export interface PairSheetInput {
  readonly commandLine?: string;
  readonly input: {
    readonly file: string;
    readonly sampleRateHz: number;
    readonly channelCount: number;
    readonly frames: number;
    readonly loudness: LoudnessReport | null;
  };
  readonly oversample: number;
  readonly inputVoltsAtFullScale: number;
  readonly format: PairOutputFormat;
  readonly latencyCompensation: string;
  readonly plan: PairGainPlan;
  readonly passes: number;
  readonly sides: readonly [PairSideInfo, PairSideInfo];
  readonly designs: readonly DesignSheetEntry[];
}

const finiteOrNull = (x: number): number | null => (Number.isFinite(x) ? x : null);

export function buildPairSheet(s: PairSheetInput): PairSheet {
  const check = checkPair(s.plan, [s.sides[0].final, s.sides[1].final]);
  const files = s.sides.map((side, i): PairFileEntry => ({
    variant: side.variant,
    file: side.file,
    source: side.source,
    gainDb: s.plan.gainsDb[i] ?? 0,
    gain: s.plan.gains[i] ?? 1,
    integratedLufs: side.final.integratedLufs,
    truePeakDbtp: side.final.truePeakDbtp,
    loudnessRangeLu: side.final.loudnessRangeLu,
    samplePeakDbfs: side.final.samplePeakDbfs,
    shortTermMaxLufs: side.final.shortTermMaxLufs,
    renderedIntegratedLufs: side.rendered.integratedLufs,
    renderedTruePeakDbtp: side.rendered.truePeakDbtp,
  }));
  const L = s.input.loudness;
  return {
    schema: 'valvewright.pair-sheet.v1',
    caution: HIGH_VOLTAGE_CAUTION,
    ...(s.commandLine !== undefined ? { commandLine: s.commandLine } : {}),
    input: {
      file: s.input.file,
      sampleRateHz: s.input.sampleRateHz,
      channelCount: s.input.channelCount,
      frames: s.input.frames,
      seconds: s.input.frames / s.input.sampleRateHz,
      integratedLufs: L ? finiteOrNull(L.integratedLufs) : null,
      truePeakDbtp: L ? finiteOrNull(L.truePeakDbtp) : null,
      loudnessRangeLu: L ? finiteOrNull(L.loudnessRangeLu) : null,
      mixedToMono: s.input.channelCount > 1,
    },
    render: {
      oversample: s.oversample,
      inputVoltsAtFullScale: s.inputVoltsAtFullScale,
      format: s.format.float ? '32-bit float WAV, mono' : '24-bit PCM WAV (rounded, clamped), mono',
      latencyCompensation: s.latencyCompensation,
      limiter: 'none',
    },
    matching: {
      reference: s.plan.reference,
      requestedLufs: s.plan.requestedLufs,
      commonLufs: s.plan.commonLufs,
      ceilingDbtp: s.plan.ceilingDbtp,
      ceilingBound: s.plan.ceilingBound,
      ceilingReductionDb: s.plan.ceilingReductionDb,
      differenceLu: check.differenceLu,
      underCeiling: check.underCeiling,
      passes: s.passes,
      note: describePlan(s.plan, [s.sides[0].variant, s.sides[1].variant]),
    },
    files,
    designs: s.designs,
  };
}

const n1 = (x: number | null) => (x === null || !Number.isFinite(x) ? '-inf' : x.toFixed(2));

/** The readable sheet. */
export function pairSheetMarkdown(sheet: PairSheet): string {
  const L: string[] = [];
  L.push(`# Pair sheet: ${sheet.files.map((f) => `${f.variant.toUpperCase()} = ${f.source}`).join(', ')}`, '');
  L.push(`> ${sheet.caution}`, '');
  if (sheet.commandLine) L.push('Command:', '', '```', sheet.commandLine, '```', '');
  const i = sheet.input;
  L.push('## Input', '');
  L.push(`- file: \`${i.file}\` (${i.channelCount} ch${i.mixedToMono ? ', mixed to mono' : ''}, ${i.sampleRateHz} Hz, ${i.seconds.toFixed(2)} s)`);
  L.push(`- integrated loudness ${n1(i.integratedLufs)} LUFS, true peak ${n1(i.truePeakDbtp)} dBTP, loudness range ${n1(i.loudnessRangeLu)} LU`, '');
  L.push('## Render', '');
  L.push(`- ${sheet.render.oversample}x oversampling, input full scale = ${sheet.render.inputVoltsAtFullScale} V, no limiter`);
  L.push(`- ${sheet.render.format}`);
  L.push(`- alignment: ${sheet.render.latencyCompensation}`, '');
  const m = sheet.matching;
  L.push('## Loudness matching (ITU-R BS.1770-4, true peak 4x)', '');
  L.push(`- ${m.note}`);
  L.push(
    `- measured difference ${m.differenceLu.toFixed(3)} LU; ${m.underCeiling ? 'both true peaks at or under' : 'A TRUE PEAK IS OVER'} the ${m.ceilingDbtp} dBTP ceiling; ${m.passes} write pass${m.passes === 1 ? '' : 'es'}`,
    '',
  );
  L.push('| variant | file | source | gain dB | integrated LUFS | true peak dBTP | LRA LU | rendered LUFS | rendered dBTP |');
  L.push('|---|---|---|---|---|---|---|---|---|');
  for (const f of sheet.files) {
    L.push(
      `| ${f.variant} | ${f.file} | ${f.source} | ${fmtDb(f.gainDb)} | ${n1(f.integratedLufs)} | ${n1(f.truePeakDbtp)} | ${n1(f.loudnessRangeLu)} | ${n1(f.renderedIntegratedLufs)} | ${n1(f.renderedTruePeakDbtp)} |`,
    );
  }
  L.push('');
  for (const d of sheet.designs) {
    L.push(`## Design: ${d.name} (\`${d.ref}\`)`, '');
    if (d.description) L.push(d.description, '');
    L.push(
      `Supply ${d.supply.volts} through ${d.supply.ohms}, filter ${d.supply.filterFarads}; input node ${d.input.node} (source ${d.input.ohms}); output node ${d.output.node} into ${d.output.loadOhms}.`,
      '',
    );
    L.push('| part | kind | value | nodes | detail | label |', '|---|---|---|---|---|---|');
    for (const c of d.components) L.push(`| ${c.id} | ${c.kind} | ${c.value} | ${c.nodes.join(', ')} | ${c.detail ?? ''} | ${c.label ?? ''} |`);
    L.push('', 'Operating point (DC, capacitors open, input at 0 V):', '', '| node | volts |', '|---|---|');
    for (const [n, v] of Object.entries(d.operatingPoint.nodes)) L.push(`| ${n} | ${v.toFixed(3)} |`);
    L.push('', '| tube | plate mA | plate W | Vpk V | Vgk V | grid µA | screen mA | screen W | cathode mA |', '|---|---|---|---|---|---|---|---|---|');
    for (const [id, t] of Object.entries(d.operatingPoint.tubes)) {
      const pent = t.kind === 'pentode';
      L.push(
        `| ${id} | ${(t.plateAmps * 1e3).toFixed(3)} | ${t.plateWatts.toFixed(3)} | ${t.vpk.toFixed(1)} | ${t.vgk.toFixed(3)} | ${(t.gridAmps * 1e6).toFixed(3)} | ${pent ? (t.screenAmps * 1e3).toFixed(3) : '-'} | ${pent ? t.screenWatts.toFixed(3) : '-'} | ${(t.cathodeAmps * 1e3).toFixed(3)} |`,
      );
    }
    L.push(
      '',
      `Rating margins (${d.ratingMarginsSource}):`,
      '',
      '| tube | quantity | worst | when | rating | used | margin |',
      '|---|---|---|---|---|---|---|',
    );
    for (const r of d.ratingMargins) {
      const v = (x: number) => (r.unit === 'A' ? `${(x * 1e3).toFixed(3)} mA` : `${x.toFixed(r.unit === 'W' ? 3 : 1)} ${r.unit}`);
      L.push(
        `| ${r.part} (${r.type}) | ${r.quantity} | ${v(r.value)} | ${r.condition} | ${v(r.rating)} | ${(r.fractionOfRating * 100).toFixed(1)} % | ${v(r.margin)} |`,
      );
    }
    L.push('', '| part | stress | worst | when | buy at least |', '|---|---|---|---|---|');
    for (const b of d.partRatings) {
      L.push(
        `| ${b.part} | ${b.quantity} | ${b.worst.toPrecision(3)} ${b.unit} | ${b.condition} | ${b.buy === null ? 'none large enough' : `${b.buy} ${b.unit}`} |`,
      );
    }
    if (d.ratingFindings.length > 0) {
      L.push('', 'Findings:', '');
      for (const f of d.ratingFindings) L.push(`- ${f.severity}: ${f.message}`);
    }
    L.push('');
  }
  L.push(`_${sheet.caution}_`, '');
  return L.join('\n');
}

// ---------------------------------------------------------------------------------------------
// In-memory pack (for the UI: render the loop region for A, B and dry, then download)

export interface PackSide {
  readonly variant: PairVariant;
  /** Design name (or the DI's name for dry): goes into the file name. */
  readonly name: string;
  /** Rendered, latency-aligned float signal (renderAligned), or the DI itself for dry. */
  readonly samples: Float32Array | Float64Array;
}

export interface PackFile {
  readonly name: string;
  readonly variant: PairVariant;
  /** Quantised samples exactly as written (decode of the encoded file); encode with io/wav.ts encodeWav. */
  readonly samples: Float32Array;
  readonly format: PairOutputFormat;
  readonly rendered: LoudnessReport;
  readonly final: LoudnessReport;
}

const MAX_PASSES = 4;

/**
 * Match two in-memory signals: plan, apply + quantise, measure the quantised result, correct
 * until within PAIR_AIM_LU (at most MAX_PASSES). Returns the files and the final plan.
 */
export function matchPairInMemory(
  sides: readonly [PackSide, PackSide],
  sampleRateHz: number,
  format: PairOutputFormat,
  options: PairMatchOptions = {},
): { files: [PackFile, PackFile]; plan: PairGainPlan; passes: number; check: PairCheck } {
  const rendered = [measureLoudness([sides[0].samples], sampleRateHz), measureLoudness([sides[1].samples], sampleRateHz)] as const;
  let plan = planPairGains(rendered, options);
  const out = [new Float32Array(sides[0].samples.length), new Float32Array(sides[1].samples.length)] as const;
  let finals: readonly [LoudnessReport, LoudnessReport] = rendered;
  let check: PairCheck | undefined;
  let passes = 0;
  while (passes < MAX_PASSES) {
    passes++;
    quantiseBlock(sides[0].samples, sides[0].samples.length, plan.gains[0], format, out[0]);
    quantiseBlock(sides[1].samples, sides[1].samples.length, plan.gains[1], format, out[1]);
    finals = [measureLoudness([out[0]], sampleRateHz), measureLoudness([out[1]], sampleRateHz)];
    check = checkPair(plan, finals);
    if (check.settled) break;
    if (passes < MAX_PASSES) plan = correctPairGains(plan, finals);
  }
  const files = sides.map((s, i): PackFile => ({
    name: pairFileName(s.name, s.variant, sampleRateHz, format),
    variant: s.variant,
    samples: out[i as 0 | 1],
    format,
    rendered: rendered[i as 0 | 1],
    final: finals[i as 0 | 1],
  })) as [PackFile, PackFile];
  return { files, plan, passes, check: check ?? checkPair(plan, finals) };
}

export interface PackDesign {
  readonly design: Design;
  readonly ref: string;
  readonly operatingPoint: OperatingPoint;
}

/**
 * The pack a UI offers for download: two matched files (A+B or dry+B, or any two sides) and
 * the sheet (JSON object + Markdown). `designs` are the designs behind the non-dry sides.
 */
export function buildPairPack(args: {
  readonly sides: readonly [PackSide, PackSide];
  readonly sampleRateHz: number;
  readonly input: { readonly file: string; readonly channelCount: number; readonly loudness: LoudnessReport | null };
  readonly designs: readonly PackDesign[];
  readonly oversample: number;
  readonly inputVoltsAtFullScale: number;
  readonly latencyCompensation: string;
  readonly format?: PairOutputFormat;
  readonly options?: PairMatchOptions;
  readonly commandLine?: string;
}): { files: [PackFile, PackFile]; sheet: PairSheet; sheetMarkdown: string; sheetJson: string } {
  const format = args.format ?? PCM24;
  const m = matchPairInMemory(args.sides, args.sampleRateHz, format, args.options);
  const sheet = buildPairSheet({
    ...(args.commandLine !== undefined ? { commandLine: args.commandLine } : {}),
    input: {
      file: args.input.file,
      sampleRateHz: args.sampleRateHz,
      channelCount: args.input.channelCount,
      frames: args.sides[0].samples.length,
      loudness: args.input.loudness,
    },
    oversample: args.oversample,
    inputVoltsAtFullScale: args.inputVoltsAtFullScale,
    format,
    latencyCompensation: args.latencyCompensation,
    plan: m.plan,
    passes: m.passes,
    sides: [0, 1].map((i) => ({
      variant: m.files[i as 0 | 1].variant,
      file: m.files[i as 0 | 1].name,
      source: args.sides[i as 0 | 1].name,
      rendered: m.files[i as 0 | 1].rendered,
      final: m.files[i as 0 | 1].final,
    })) as [PairSideInfo, PairSideInfo],
    designs: args.designs.map((d) => designSheetEntry(d.design, d.ref, d.operatingPoint)),
  });
  return { files: m.files, sheet, sheetMarkdown: pairSheetMarkdown(sheet), sheetJson: JSON.stringify(sheet, jsonReplacer, 2) };
}

/** JSON has no Infinity: non-finite numbers become null. */
export function jsonReplacer(_key: string, value: unknown): unknown {
  return typeof value === 'number' && !Number.isFinite(value) ? null : value;
}
