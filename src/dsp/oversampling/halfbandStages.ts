// One 2x stage (up and down share the design, hold separate state). Polyphase: every
// operation runs at the low rate of the stage. Float64 state, no allocation after construction.
import type { EllipticHalfbandDesign, HalfbandDesign, KaiserHalfbandDesign } from './halfbandDesign.ts';

export interface HalfbandStage {
  readonly design: HalfbandDesign;
  /** Group delay at DC of H(z) itself, in samples of the stage's high rate. */
  readonly filterDelayHighSamples: number;
  /** Up then down through this stage, at DC, in samples of the stage's low rate. */
  readonly roundTripDelayLowSamples: number;
  /** One low-rate sample in, two high-rate samples written to dst[offset], dst[offset + 1]. */
  upsample(x: number, dst: Float64Array, offset: number): void;
  /** Two high-rate samples (earlier first) in, one low-rate sample out. */
  downsample(x0: number, x1: number): number;
  /** upsample() over src[0 … count-1] into dst[0 … 2·count-1] (src ≠ dst). */
  upsampleBlock(src: Float64Array, count: number, dst: Float64Array): void;
  /** downsample() over src[0 … 2·count-1] into dst[0 … count-1]; dst may be src. */
  downsampleBlock(src: Float64Array, count: number, dst: Float64Array): void;
  /** Steady state for a constant input `value` (both directions). */
  reset(value: number): void;
}

/**
 * Runs a chain of sections (a + z⁻¹)/(1 + a·z⁻¹) at the low rate on io[k], in place.
 * state[i] = last input of section i, state[n] = last output of the chain (= last input of a
 * section n). Arrays in and out: no double crosses the call (V8 boxes a double passed to or
 * returned from a call it does not inline, and whether it inlines depends on the caller's size).
 */
function allpassChainAt(coefs: Float64Array, state: Float64Array, io: Float64Array, k: number): void {
  let input = io[k]!;
  const n = coefs.length;
  for (let i = 0; i < n; i++) {
    const y = coefs[i]! * (input - state[i + 1]!) + state[i]!;
    state[i] = input;
    input = y;
  }
  state[n] = input;
  io[k] = input;
}

/** DC group delay of (a + z⁻²)/(1 + a·z⁻²) at the high rate: 2·(1 - a)/(1 + a) (first-order
 * allpass group delay at ω = 0, standard result, e.g. Regalia, Mitra & Vaidyanathan,
 * "The digital all-pass filter: a versatile signal processing building block", Proc. IEEE 1988,
 * from memory). */
function allpassDcDelayHigh(coefs: readonly number[]): number {
  let sum = 0;
  for (const a of coefs) sum += (2 * (1 - a)) / (1 + a);
  return sum;
}

/** Added at the input of every allpass chain and removed at its output, so decaying states
 * settle near this normal number instead of in a denormal zero-input limit cycle (which
 * costs time on x86). Far below any audio signal (-500 dB); |x| > 1e-9 is unchanged by it. */
const DENORMAL_GUARD = 1e-25;

export class IirHalfbandStage implements HalfbandStage {
  readonly design: EllipticHalfbandDesign;
  readonly filterDelayHighSamples: number;
  readonly roundTripDelayLowSamples: number;
  private readonly c0: Float64Array;
  private readonly c1: Float64Array;
  private readonly up0: Float64Array;
  private readonly up1: Float64Array;
  private readonly dn0: Float64Array;
  private readonly dn1: Float64Array;
  /** Scratch for the decimator's two path inputs. */
  private readonly pair = new Float64Array(2);

  constructor(design: EllipticHalfbandDesign) {
    this.design = design;
    this.c0 = Float64Array.from(design.path0Coefficients);
    this.c1 = Float64Array.from(design.path1Coefficients);
    this.up0 = new Float64Array(this.c0.length + 1);
    this.up1 = new Float64Array(this.c1.length + 1);
    this.dn0 = new Float64Array(this.c0.length + 1);
    this.dn1 = new Float64Array(this.c1.length + 1);
    // H = ½(A0(z²) + z⁻¹A1(z²)): near DC its phase slope is the mean of the two paths'.
    const tau0 = allpassDcDelayHigh(design.path0Coefficients);
    const tau1 = 1 + allpassDcDelayHigh(design.path1Coefficients);
    this.filterDelayHighSamples = (tau0 + tau1) / 2;
    // Interpolator output 2n is H's output at time 2n; the decimator returns H's output at
    // 2n+1 labelled as low-rate time n, i.e. one high-rate sample early.
    this.roundTripDelayLowSamples = (2 * this.filterDelayHighSamples - 1) / 2;
  }

  upsample(x: number, dst: Float64Array, offset: number): void {
    const g = x + DENORMAL_GUARD;
    dst[offset] = g;
    dst[offset + 1] = g;
    allpassChainAt(this.c0, this.up0, dst, offset);
    allpassChainAt(this.c1, this.up1, dst, offset + 1);
    dst[offset] = dst[offset]! - DENORMAL_GUARD;
    dst[offset + 1] = dst[offset + 1]! - DENORMAL_GUARD;
  }

  downsample(x0: number, x1: number): number {
    const pair = this.pair;
    pair[0] = x1 + DENORMAL_GUARD;
    pair[1] = x0 + DENORMAL_GUARD;
    allpassChainAt(this.c0, this.dn0, pair, 0);
    allpassChainAt(this.c1, this.dn1, pair, 1);
    return 0.5 * (pair[0]! + pair[1]!) - DENORMAL_GUARD;
  }

  upsampleBlock(src: Float64Array, count: number, dst: Float64Array): void {
    const { c0, c1, up0, up1 } = this;
    // backwards, so that dst may be src (output 2i and 2i+1 are written after input i is read)
    for (let i = count - 1; i >= 0; i--) {
      const g = src[i]! + DENORMAL_GUARD;
      dst[2 * i] = g;
      dst[2 * i + 1] = g;
    }
    for (let i = 0; i < count; i++) {
      allpassChainAt(c0, up0, dst, 2 * i);
      allpassChainAt(c1, up1, dst, 2 * i + 1);
      dst[2 * i] = dst[2 * i]! - DENORMAL_GUARD;
      dst[2 * i + 1] = dst[2 * i + 1]! - DENORMAL_GUARD;
    }
  }

  downsampleBlock(src: Float64Array, count: number, dst: Float64Array): void {
    const { c0, c1, dn0, dn1, pair } = this;
    for (let i = 0; i < count; i++) {
      pair[0] = src[2 * i + 1]! + DENORMAL_GUARD;
      pair[1] = src[2 * i]! + DENORMAL_GUARD;
      allpassChainAt(c0, dn0, pair, 0);
      allpassChainAt(c1, dn1, pair, 1);
      dst[i] = 0.5 * (pair[0]! + pair[1]!) - DENORMAL_GUARD;
    }
  }

  reset(value: number): void {
    const v = value + DENORMAL_GUARD;
    this.up0.fill(v);
    this.up1.fill(v);
    this.dn0.fill(v);
    this.dn1.fill(v);
  }
}

/** Delay line with doubled storage so the newest `length` samples are contiguous. */
class History {
  readonly length: number;
  readonly buf: Float64Array;
  pos = 0;
  constructor(length: number) {
    this.length = length;
    this.buf = new Float64Array(2 * length);
  }
  /** After push, buf[pos + i] is the sample i steps back (i = 0 newest). */
  push(x: number): void {
    this.pos = (this.pos === 0 ? this.length : this.pos) - 1;
    this.buf[this.pos] = x;
    this.buf[this.pos + this.length] = x;
  }
  fill(value: number): void {
    this.buf.fill(value);
  }
}

/** Symmetric 2M-tap dot product: Σ g[i]·h[pos+i], g[i] = g[2M-1-i]. */
function symmetricDot(gHalf: Float64Array, buf: Float64Array, pos: number, len: number): number {
  let acc = 0;
  const last = pos + len - 1;
  const m = gHalf.length;
  for (let i = 0; i < m; i++) acc += (gHalf[i] as number) * ((buf[pos + i] as number) + (buf[last - i] as number));
  return acc;
}

export class FirHalfbandStage implements HalfbandStage {
  readonly design: KaiserHalfbandDesign;
  readonly filterDelayHighSamples: number;
  readonly roundTripDelayLowSamples: number;
  /** First half of the 2M nonzero off-centre taps h[0], h[2], … (causal indexing). */
  private readonly gHalf: Float64Array;
  /** Same taps doubled, for the interpolator (gain 2 restores the zero-stuffing loss). */
  private readonly gHalfTimesTwo: Float64Array;
  private readonly m: number;
  private readonly upHistory: History;
  private readonly downOdd: History;
  private readonly downEven: History;

  constructor(design: KaiserHalfbandDesign) {
    this.design = design;
    const length = design.taps.length; // 4M - 1
    const m = (length + 1) / 4;
    if (!Number.isInteger(m) || m < 1) throw new Error(`FirHalfbandStage: tap count ${length} is not of the form 4M-1`);
    this.m = m;
    this.gHalf = new Float64Array(m);
    for (let i = 0; i < m; i++) this.gHalf[i] = design.taps[2 * i] ?? 0;
    this.gHalfTimesTwo = this.gHalf.map((g) => 2 * g);
    this.upHistory = new History(2 * m);
    this.downOdd = new History(2 * m);
    this.downEven = new History(m);
    this.filterDelayHighSamples = 2 * m - 1; // (N - 1)/2 for linear phase, N = 4M - 1
    this.roundTripDelayLowSamples = (2 * this.filterDelayHighSamples - 1) / 2;
  }

  upsample(x: number, dst: Float64Array, offset: number): void {
    const h = this.upHistory;
    h.push(x);
    // y[2n] = 2·Σ h[2i]·x[n-i];  y[2n+1] = 2·½·x[n-(M-1)].
    dst[offset] = symmetricDot(this.gHalfTimesTwo, h.buf, h.pos, h.length);
    dst[offset + 1] = h.buf[h.pos + this.m - 1] as number;
  }

  downsample(x0: number, x1: number): number {
    const odd = this.downOdd;
    const even = this.downEven;
    odd.push(x1);
    even.push(x0);
    // y = Σ h[2i]·x[2n+1-2i] + ½·x[2n-2(M-1)].
    return symmetricDot(this.gHalf, odd.buf, odd.pos, odd.length) + 0.5 * (even.buf[even.pos + this.m - 1] as number);
  }

  upsampleBlock(src: Float64Array, count: number, dst: Float64Array): void {
    for (let i = 0; i < count; i++) this.upsample(src[i] as number, dst, 2 * i);
  }

  downsampleBlock(src: Float64Array, count: number, dst: Float64Array): void {
    for (let i = 0; i < count; i++) dst[i] = this.downsample(src[2 * i] as number, src[2 * i + 1] as number);
  }

  reset(value: number): void {
    this.upHistory.fill(value);
    this.downOdd.fill(value);
    this.downEven.fill(value);
  }
}

export function makeStage(design: HalfbandDesign): HalfbandStage {
  return design.kind === 'iir' ? new IirHalfbandStage(design) : new FirHalfbandStage(design);
}
