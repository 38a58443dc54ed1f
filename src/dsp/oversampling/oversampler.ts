// Oversampling by cascaded 2x polyphase half-band stages (1x … 128x).
//
// Why two filter families:
// - quality 'live' (default for 1x-8x): two-path allpass IIR half-bands, elliptic design.
//   Each 2x stage costs a handful of multiplies per sample, gets > 100 dB with 3-6
//   coefficients, and its group delay is a few high-rate samples: the whole 8x round trip is
//   about 4 base samples (< 0.1 ms). Price: nonlinear phase; the round-trip group delay
//   grows from ~3-4 base samples in the midband to ~7-8 at 18 kHz (measured at 48 kHz,
//   2x-8x), i.e. < 0.1 ms of dispersion, at the top of the band where a guitar fuzz has
//   little energy. The magnitude stays flat (the two paths are power complementary).
//   Decaying states are kept out of denormals (see DENORMAL_GUARD).
// - quality 'offline' (default for 16x, 32x): linear-phase FIR half-bands, Kaiser-window
//   design. No phase distortion, so the waveform into the tube model has the right shape at
//   every frequency and the latency is one constant for all frequencies (easy to compensate
//   offline). Price: ~1.5-3x the cost (bench) and ~1 ms of latency, irrelevant when rendering.
// Both have DC gain 1 by construction (allpass paths are 1 at DC; FIR odd taps sum to ½).
//
// Stage s (s = 0 next to the base rate) runs at 2^(s+1)·fs. All stages keep the passband
// up to PASSBAND_EDGE_OF_BASE_RATE·fs (18 kHz at 48 kHz, 16.5 kHz at 44.1 kHz) and reject
// everything that would fold back below it, so the transition width of stage s, in cycles
// per sample at its high rate, is ½ - 2·fp/2^(s+1) = ½ - 0.375/2^s: stage 0 does the hard
// work, later stages are short. As usual with half-bands, content between fp and fs/2 is
// not protected: aliases may land in 18-24 kHz (at 48 kHz), above the passband.
import { designEllipticHalfband, designKaiserHalfband, type HalfbandDesign } from './halfbandDesign.ts';
import { makeStage, type HalfbandStage } from './halfbandStages.ts';

export type OversamplingFactor = 1 | 2 | 4 | 8 | 16 | 32 | 64 | 128;
export type OversamplingQuality = 'live' | 'offline';

export interface OversamplerOptions {
  /** Default: 'live' for factors up to 8, 'offline' for 16 and 32. */
  readonly quality?: OversamplingQuality;
}

/** Passband edge as a fraction of the base sample rate. */
export const PASSBAND_EDGE_OF_BASE_RATE = 0.375;
/** Stopband attenuation each stage is designed for. */
export const STAGE_ATTENUATION_DB: Readonly<Record<OversamplingQuality, number>> = { live: 100, offline: 130 };
/** Inputs are clamped to ±this (NaN becomes 0) so no state can overflow to Inf/NaN. */
export const INPUT_LIMIT = 1e12;

const FACTORS: readonly number[] = [1, 2, 4, 8, 16, 32, 64, 128];

/** Transition width of 2x stage s (0-based from the base rate), cycles/sample at its high rate. */
export function stageTransitionWidth(stageIndex: number): number {
  return 0.5 - PASSBAND_EDGE_OF_BASE_RATE / 2 ** stageIndex;
}

/** Designs for the stages of a given factor and quality (pure; stage 0 first). */
export function designStages(factor: OversamplingFactor, quality: OversamplingQuality): HalfbandDesign[] {
  const count = Math.round(Math.log2(factor));
  const designs: HalfbandDesign[] = [];
  for (let s = 0; s < count; s++) {
    const t = stageTransitionWidth(s);
    const a = STAGE_ATTENUATION_DB[quality];
    designs.push(quality === 'live' ? designEllipticHalfband(t, a) : designKaiserHalfband(t, a));
  }
  return designs;
}

/**
 * Inputs clamped to ±INPUT_LIMIT and NaN to 0, by Math.min/Math.max rather than branches that
 * return the module-level INPUT_LIMIT: such a branch makes TurboFan merge the result as a tagged
 * number and box it on every call (measured: 4x up and down over 2 M samples, 78 minor
 * collections per million base samples; none this way).
 */
function sanitize(x: number): number {
  const c = Math.max(-INPUT_LIMIT, Math.min(INPUT_LIMIT, x));
  return c === c ? c : 0;
}

export class Oversampler {
  readonly factor: number;
  readonly quality: OversamplingQuality;
  /** Up then down, at low frequency (group delay at DC), in base-rate samples. */
  readonly latencyBaseSamples: number;
  readonly stageDesigns: readonly HalfbandDesign[];
  private readonly stages: readonly HalfbandStage[];
  private readonly scratch: Float64Array;
  private readonly one: Float64Array;

  constructor(factor: OversamplingFactor, options?: OversamplerOptions) {
    if (!FACTORS.includes(factor)) {
      throw new Error(`Oversampler: factor must be 1, 2, 4, 8, 16, 32, 64 or 128, got ${String(factor)}`);
    }
    const quality = options?.quality ?? (factor <= 8 ? 'live' : 'offline');
    if (quality !== 'live' && quality !== 'offline') {
      throw new Error(`Oversampler: quality must be 'live' or 'offline', got ${String(quality)}`);
    }
    this.factor = factor;
    this.quality = quality;
    this.stageDesigns = designStages(factor, quality);
    this.stages = this.stageDesigns.map(makeStage);
    this.scratch = new Float64Array(Math.max(1, factor));
    this.one = new Float64Array(1);
    let latency = 0;
    this.stages.forEach((stage, s) => {
      latency += stage.roundTripDelayLowSamples / 2 ** s;
    });
    this.latencyBaseSamples = latency;
  }

  /** One base-rate sample in; `factor` oversampled samples written to out[0 … factor-1]. */
  upsample(x: number, out: Float64Array): void {
    this.one[0] = sanitize(x);
    this.upsampleOne(out);
  }

  /**
   * upsample(src[k], out) with the input read from an array: on the audio path no double
   * crosses a call (V8 boxes doubles passed to calls it does not inline).
   */
  upsampleFrom(src: Float64Array, k: number, out: Float64Array): void {
    this.one[0] = sanitize(src[k]!);
    this.upsampleOne(out);
  }

  /** `factor` oversampled samples (earliest first) in; one base-rate sample out. */
  downsample(block: Float64Array): number {
    this.downsampleOne(block);
    return this.scratch[0]!;
  }

  /** downsample(block) written into dst[k] instead of returned. */
  downsampleInto(block: Float64Array, dst: Float64Array, k: number): void {
    this.downsampleOne(block);
    dst[k] = this.scratch[0]!;
  }

  /** Interpolates the sample in one[0] into out[0 … factor-1]. */
  private upsampleOne(out: Float64Array): void {
    if (out.length < this.factor) throw new Error(`Oversampler.upsample: out has ${out.length} samples, needs ${this.factor}`);
    const stages = this.stages;
    const count = stages.length;
    if (count === 0) {
      out[0] = this.one[0]!;
      return;
    }
    // Ping-pong between scratch and out so that the last stage writes into out.
    let from: Float64Array = (count - 1) % 2 === 0 ? out : this.scratch;
    (stages[0] as HalfbandStage).upsampleBlock(this.one, 1, from);
    let n = 2;
    for (let s = 1; s < count; s++) {
      const dst = from === out ? this.scratch : out;
      (stages[s] as HalfbandStage).upsampleBlock(from, n, dst);
      from = dst;
      n *= 2;
    }
  }

  /** Decimates block[0 … factor-1] into scratch[0]. */
  private downsampleOne(block: Float64Array): void {
    if (block.length < this.factor) throw new Error(`Oversampler.downsample: block has ${block.length} samples, needs ${this.factor}`);
    const stages = this.stages;
    const buf = this.scratch;
    const F = this.factor;
    for (let i = 0; i < F; i++) buf[i] = sanitize(block[i]!);
    let n = F / 2;
    // Each stage works in place: output i is written after inputs 2i and 2i+1 are read.
    for (let s = stages.length - 1; s >= 0; s--) {
      (stages[s] as HalfbandStage).downsampleBlock(buf, n, buf);
      n /= 2;
    }
  }

  /** Steady state for a constant input `value` (default 0): no transient when the signal
   * starts at that value. */
  reset(value = 0): void {
    const v = sanitize(value);
    for (const stage of this.stages) stage.reset(v);
  }
}
