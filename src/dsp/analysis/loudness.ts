// Loudness per ITU-R BS.1770-4 and EBU R128 / EBU Tech 3341 / Tech 3342.
// BS.1770-4 (confirmed, ITU-R BS.1770-4): K-weighting 48 kHz coefficients; L = -0.691 +
// 10 log10(sum G_i z_i); 400 ms gating blocks with 75 % overlap; absolute gate -70 LKFS,
// relative gate -10 LU. Tech 3342 LRA (from memory): 3 s short-term values, absolute gate
// -70 LUFS, relative gate -20 LU, LRA = 95th - 10th percentile.

import { TruePeakMeter } from './true-peak.ts';

export interface Biquad {
  readonly b: readonly [number, number, number];
  readonly a: readonly [number, number, number];
}

export interface KWeighting {
  /** Stage 1: high-frequency shelf ("pre-filter"). */
  readonly shelf: Biquad;
  /** Stage 2: RLB high-pass. */
  readonly highPass: Biquad;
}

/** BS.1770-4 Table 1 and Table 2, 48 kHz (confirmed, ITU-R BS.1770-4). */
export const K_WEIGHTING_48K: KWeighting = {
  shelf: {
    b: [1.53512485958697, -2.69169618940638, 1.19839281085285],
    a: [1, -1.69065929318241, 0.73248077421585],
  },
  highPass: { b: [1, -2, 1], a: [1, -1.99004745483398, 0.99007225036621] },
};

// Analog prototype parameters fitted to the 48 kHz coefficients, as used by public
// implementations (from memory, not from the standard). Bilinear transform with
// prewarping at f0 (K = tan(pi f0 / fs)).
const SHELF_F0_HZ = 1681.974450955533;
const SHELF_GAIN_DB = 3.999843853973347;
const SHELF_Q = 0.7071752369554196;
const SHELF_VB_EXPONENT = 0.4996667741545416;
const HIGHPASS_F0_HZ = 38.13547087602444;
const HIGHPASS_Q = 0.5003270373238773;

/** K-weighting derived for any sample rate from the analog prototype. */
export function deriveKWeighting(sampleRateHz: number): KWeighting {
  checkSampleRate(sampleRateHz);
  let K = Math.tan((Math.PI * SHELF_F0_HZ) / sampleRateHz);
  const vh = Math.pow(10, SHELF_GAIN_DB / 20);
  const vb = Math.pow(vh, SHELF_VB_EXPONENT);
  let a0 = 1 + K / SHELF_Q + K * K;
  const shelf: Biquad = {
    b: [(vh + (vb * K) / SHELF_Q + K * K) / a0, (2 * (K * K - vh)) / a0, (vh - (vb * K) / SHELF_Q + K * K) / a0],
    a: [1, (2 * (K * K - 1)) / a0, (1 - K / SHELF_Q + K * K) / a0],
  };
  K = Math.tan((Math.PI * HIGHPASS_F0_HZ) / sampleRateHz);
  a0 = 1 + K / HIGHPASS_Q + K * K;
  const highPass: Biquad = { b: [1, -2, 1], a: [1, (2 * (K * K - 1)) / a0, (1 - K / HIGHPASS_Q + K * K) / a0] };
  return { shelf, highPass };
}

/** Published coefficients at exactly 48 kHz, derived ones elsewhere. */
export function kWeightingCoefficients(sampleRateHz: number): KWeighting {
  return sampleRateHz === 48000 ? K_WEIGHTING_48K : deriveKWeighting(sampleRateHz);
}

function biquadPowerGain(f: Biquad, frequencyHz: number, sampleRateHz: number): number {
  const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
  const c1 = Math.cos(w);
  const s1 = Math.sin(w);
  const c2 = Math.cos(2 * w);
  const s2 = Math.sin(2 * w);
  const nr = f.b[0] + f.b[1] * c1 + f.b[2] * c2;
  const ni = -(f.b[1] * s1 + f.b[2] * s2);
  const dr = f.a[0] + f.a[1] * c1 + f.a[2] * c2;
  const di = -(f.a[1] * s1 + f.a[2] * s2);
  return (nr * nr + ni * ni) / (dr * dr + di * di);
}

/** Magnitude response of the K-weighting cascade in dB. */
export function kWeightingResponseDb(k: KWeighting, frequencyHz: number, sampleRateHz: number): number {
  return 10 * Math.log10(biquadPowerGain(k.shelf, frequencyHz, sampleRateHz) * biquadPowerGain(k.highPass, frequencyHz, sampleRateHz));
}

/**
 * BS.1770-4 channel weights (1.41 for surrounds: from memory). 5 channels: L R C Ls Rs;
 * 6 channels: L R C LFE Ls Rs (WAVE order), LFE excluded. Other counts: all 1.0.
 */
export function defaultChannelWeights(channelCount: number): number[] {
  if (channelCount === 5) return [1, 1, 1, 1.41, 1.41];
  if (channelCount === 6) return [1, 1, 1, 0, 1.41, 1.41];
  return new Array<number>(channelCount).fill(1);
}

export interface LoudnessReport {
  integratedLufs: number;
  loudnessRangeLu: number;
  truePeakDbtp: number;
  samplePeakDbfs: number;
  shortTermMaxLufs: number;
  momentaryMaxLufs: number;
}

export interface LoudnessOptions {
  channelWeights?: readonly number[];
}

const ABSOLUTE_GATE_LUFS = -70;
const RELATIVE_GATE_LU = -10;
const LRA_RELATIVE_GATE_LU = -20;
const SUBBLOCKS_MOMENTARY = 4; // 400 ms of 100 ms steps
const SUBBLOCKS_SHORT_TERM = 30; // 3 s of 100 ms steps (Tech 3342: >= 10 Hz rate)

function checkSampleRate(sampleRateHz: number): void {
  if (!Number.isFinite(sampleRateHz) || sampleRateHz < 1000 || sampleRateHz > 1_536_000) {
    throw new Error(`sample rate ${sampleRateHz} Hz is outside 1000..1536000 Hz`);
  }
}

/**
 * K-weight x[from … to-1] (both stages, transposed direct form II, float64 state in
 * state[at … at+3]) and add the sum of squares of the weighted signal to state[at+4]. The one
 * filter loop of the file meter and the live match (loudness-match.ts); returns nothing, so a
 * call boxes no number.
 */
export function kWeightedEnergy(k: KWeighting, state: Float64Array, at: number, x: ArrayLike<number>, from: number, to: number): void {
  // indexed, not destructured: array destructuring runs an iterator, which allocates on the audio path
  const sb = k.shelf.b,
    sa = k.shelf.a,
    hb = k.highPass.b,
    ha = k.highPass.a;
  const b0 = sb[0],
    b1 = sb[1],
    b2 = sb[2],
    a1 = sa[1],
    a2 = sa[2];
  const c0 = hb[0],
    c1 = hb[1],
    c2 = hb[2],
    d1 = ha[1],
    d2 = ha[2];
  let s1 = state[at]!,
    s2 = state[at + 1]!,
    t1 = state[at + 2]!,
    t2 = state[at + 3]!,
    e = state[at + 4]!;
  for (let j = from; j < to; j++) {
    const v = x[j] ?? 0;
    const u = b0 * v + s1;
    s1 = b1 * v - a1 * u + s2;
    s2 = b2 * v - a2 * u;
    const y = c0 * u + t1;
    t1 = c1 * u - d1 * y + t2;
    t2 = c2 * u - d2 * y;
    e += y * y;
  }
  state[at] = s1;
  state[at + 1] = s2;
  state[at + 2] = t1;
  state[at + 3] = t2;
  state[at + 4] = e;
}

/** Loudness of a K-weighted, channel-weighted mean square, LUFS (BS.1770-4 eq. 2). Shared with the live match. */
export function energyToLufs(meanSquareWeighted: number): number {
  return meanSquareWeighted > 0 ? -0.691 + 10 * Math.log10(meanSquareWeighted) : -Infinity;
}

class GrowableF64 {
  data = new Float64Array(1024);
  length = 0;
  push(v: number): void {
    if (this.length === this.data.length) {
      const next = new Float64Array(this.data.length * 2);
      next.set(this.data);
      this.data = next;
    }
    this.data[this.length++] = v;
  }
  clear(): void {
    this.length = 0;
  }
}

/** Linear interpolation between order statistics (the "linear" percentile definition). */
function percentileSorted(sorted: Float64Array, fraction: number): number {
  const n = sorted.length;
  if (n === 0) return NaN;
  const pos = fraction * (n - 1);
  const lo = Math.floor(pos);
  const hi = Math.min(n - 1, lo + 1);
  const a = sorted[lo] ?? 0;
  const b = sorted[hi] ?? 0;
  return a + (b - a) * (pos - lo);
}

/**
 * Streaming loudness meter. Signal is split into 100 ms sub-blocks (boundaries at
 * round(k * fs / 10)); momentary = 4, short-term = 30 consecutive sub-blocks.
 * process() allocates nothing except amortised growth of the sub-block log (10 values/s).
 */
export class LoudnessMeter {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  private readonly weights: Float64Array;
  private readonly k: KWeighting;
  private readonly state: Float64Array; // 5 per channel: shelf s1 s2, high-pass s1 s2, block energy
  private readonly acc: Float64Array;
  private readonly subEnergy = new GrowableF64(); // sum_i G_i sum_n y_i^2 per sub-block
  private readonly subLength = new GrowableF64(); // samples per sub-block
  private subIndex = 0;
  private subPos = 0;
  private subLen: number;
  private readonly peaks: TruePeakMeter;

  constructor(sampleRateHz: number, channelCount: number, options: LoudnessOptions = {}) {
    checkSampleRate(sampleRateHz);
    if (!Number.isInteger(channelCount) || channelCount < 1) throw new Error(`loudness needs >= 1 channel, got ${channelCount}`);
    const w = options.channelWeights ?? defaultChannelWeights(channelCount);
    if (w.length !== channelCount || w.some((g) => !Number.isFinite(g) || g < 0)) {
      throw new Error(`channel weights must be ${channelCount} finite non-negative numbers`);
    }
    this.sampleRateHz = sampleRateHz;
    this.channelCount = channelCount;
    this.weights = Float64Array.from(w);
    this.k = kWeightingCoefficients(sampleRateHz);
    this.state = new Float64Array(5 * channelCount);
    this.acc = new Float64Array(channelCount);
    this.subLen = this.boundary(1);
    this.peaks = new TruePeakMeter(channelCount);
  }

  private boundary(k: number): number {
    return Math.round((k * this.sampleRateHz) / 10);
  }

  reset(): void {
    this.state.fill(0);
    this.acc.fill(0);
    this.subEnergy.clear();
    this.subLength.clear();
    this.subIndex = 0;
    this.subPos = 0;
    this.subLen = this.boundary(1);
    this.peaks.reset();
  }

  process(channels: readonly (Float32Array | Float64Array)[], frameCount?: number, offset = 0): void {
    if (channels.length !== this.channelCount) {
      throw new Error(`loudness meter expects ${this.channelCount} channels, got ${channels.length}`);
    }
    const n = frameCount ?? channels[0]?.length ?? 0;
    for (let c = 0; c < this.channelCount; c++) {
      const len = channels[c]?.length ?? 0;
      if (offset < 0 || offset + n > len) throw new Error(`channel ${c} has ${len} samples, need ${offset + n}`);
    }
    let i = offset;
    const end = offset + n;
    const st = this.state;
    while (i < end) {
      const take = Math.min(end - i, this.subLen - this.subPos);
      for (let c = 0; c < this.channelCount; c++) {
        const s = 5 * c;
        st[s + 4] = 0;
        kWeightedEnergy(this.k, st, s, channels[c] as Float32Array | Float64Array, i, i + take);
        if (!Number.isFinite(st[s]! + st[s + 1]! + st[s + 2]! + st[s + 3]! + st[s + 4]!)) {
          throw new Error(`channel ${c} contains NaN or infinite samples near frame ${i}`);
        }
        this.acc[c] = (this.acc[c] ?? 0) + st[s + 4]!;
      }
      this.subPos += take;
      i += take;
      if (this.subPos === this.subLen) this.closeSubBlock();
    }
    this.peaks.process(channels, offset, n);
  }

  private closeSubBlock(): void {
    let e = 0;
    for (let c = 0; c < this.channelCount; c++) e += (this.weights[c] ?? 0) * (this.acc[c] ?? 0);
    this.acc.fill(0);
    this.subEnergy.push(e);
    this.subLength.push(this.subLen);
    this.subIndex++;
    this.subPos = 0;
    this.subLen = this.boundary(this.subIndex + 1) - this.boundary(this.subIndex);
  }

  /** Loudness of `count` sub-blocks starting at `start` (LUFS). */
  private windowLufs(start: number, count: number): number {
    const E = this.subEnergy.data;
    const L = this.subLength.data;
    let e = 0;
    let len = 0;
    for (let k = start; k < start + count; k++) {
      e += E[k] ?? 0;
      len += L[k] ?? 0;
    }
    return energyToLufs(e / len);
  }

  /** Latest complete 400 ms window (-Infinity before 400 ms). */
  momentaryLufs(): number {
    const n = this.subEnergy.length;
    return n < SUBBLOCKS_MOMENTARY ? -Infinity : this.windowLufs(n - SUBBLOCKS_MOMENTARY, SUBBLOCKS_MOMENTARY);
  }

  /** Latest complete 3 s window (-Infinity before 3 s). */
  shortTermLufs(): number {
    const n = this.subEnergy.length;
    return n < SUBBLOCKS_SHORT_TERM ? -Infinity : this.windowLufs(n - SUBBLOCKS_SHORT_TERM, SUBBLOCKS_SHORT_TERM);
  }

  /** Weighted mean squares of all complete windows of `count` sub-blocks, hop 100 ms. */
  private windowPowers(count: number): Float64Array {
    const nWin = Math.max(0, this.subEnergy.length - count + 1);
    const out = new Float64Array(nWin);
    const E = this.subEnergy.data;
    const L = this.subLength.data;
    for (let j = 0; j < nWin; j++) {
      let e = 0;
      let len = 0;
      for (let k = j; k < j + count; k++) {
        e += E[k] ?? 0;
        len += L[k] ?? 0;
      }
      out[j] = e / len;
    }
    return out;
  }

  report(): LoudnessReport {
    const blocks = this.windowPowers(SUBBLOCKS_MOMENTARY);
    const shortTerm = this.windowPowers(SUBBLOCKS_SHORT_TERM);
    return {
      integratedLufs: gatedIntegrated(blocks),
      loudnessRangeLu: loudnessRange(shortTerm),
      truePeakDbtp: this.peaks.truePeakDbtp(),
      samplePeakDbfs: this.peaks.samplePeakDbfs(),
      shortTermMaxLufs: maxLufs(shortTerm),
      momentaryMaxLufs: maxLufs(blocks),
    };
  }
}

function maxLufs(powers: Float64Array): number {
  let m = 0;
  for (const p of powers) if (p > m) m = p;
  return energyToLufs(m);
}

/** BS.1770-4 two-stage gating over 400 ms block powers. */
function gatedIntegrated(blocks: Float64Array): number {
  let sum = 0;
  let count = 0;
  for (const p of blocks) {
    if (energyToLufs(p) > ABSOLUTE_GATE_LUFS) {
      sum += p;
      count++;
    }
  }
  if (count === 0) return -Infinity;
  const relGate = energyToLufs(sum / count) + RELATIVE_GATE_LU;
  sum = 0;
  count = 0;
  for (const p of blocks) {
    const l = energyToLufs(p);
    if (l > ABSOLUTE_GATE_LUFS && l > relGate) {
      sum += p;
      count++;
    }
  }
  return count === 0 ? -Infinity : energyToLufs(sum / count);
}

/** EBU Tech 3342 LRA; 0 when no short-term value survives the gates. */
function loudnessRange(shortTerm: Float64Array): number {
  let sum = 0;
  let count = 0;
  for (const p of shortTerm) {
    if (energyToLufs(p) > ABSOLUTE_GATE_LUFS) {
      sum += p;
      count++;
    }
  }
  if (count === 0) return 0;
  const relGate = energyToLufs(sum / count) + LRA_RELATIVE_GATE_LU;
  const kept = new Float64Array(count);
  let n = 0;
  for (const p of shortTerm) {
    const l = energyToLufs(p);
    if (l > ABSOLUTE_GATE_LUFS && l > relGate) kept[n++] = l;
  }
  if (n === 0) return 0;
  const sorted = kept.subarray(0, n).sort();
  return percentileSorted(sorted, 0.95) - percentileSorted(sorted, 0.1);
}

/** Measures a whole signal. Mono is one channel; stereo/3-channel weights are 1.0. */
export function measureLoudness(channels: readonly (Float32Array | Float64Array)[], sampleRateHz: number, options: LoudnessOptions = {}): LoudnessReport {
  if (channels.length === 0) throw new Error('loudness needs at least one channel');
  const n = channels[0]?.length ?? 0;
  for (let c = 1; c < channels.length; c++) {
    if (channels[c]?.length !== n) throw new Error(`channel ${c} has ${channels[c]?.length} samples, channel 0 has ${n}`);
  }
  const meter = new LoudnessMeter(sampleRateHz, channels.length, options);
  meter.process(channels, n, 0);
  return meter.report();
}

/** Gain in dB that moves a measured loudness to a target. */
export function gainToMatchDb(fromLufs: number, toLufs: number): number {
  if (!Number.isFinite(fromLufs) || !Number.isFinite(toLufs)) {
    throw new Error(`cannot match loudness from ${fromLufs} to ${toLufs} LUFS: both must be finite`);
  }
  return toLufs - fromLufs;
}

/** Linear amplitude factor that moves a measured loudness to a target. */
export function gainToMatch(fromLufs: number, toLufs: number): number {
  return Math.pow(10, gainToMatchDb(fromLufs, toLufs) / 20);
}
