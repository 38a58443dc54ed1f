// True-peak measurement by 4x oversampling, after ITU-R BS.1770-4 Annex 2 (from memory:
// oversample by 4, take the absolute maximum, report dB TP). The interpolator is our own
// design, not the Annex's example filter: a Kaiser-windowed sinc (beta 7, 16 taps per phase,
// 64 in all) cut off at the original Nyquist frequency, so phase 0 is the input itself.
// Each phase is normalised to unity gain at DC.

export const TRUE_PEAK_OVERSAMPLING = 4;
const TAPS_PER_PHASE = 16;
const HALF_SPAN = TAPS_PER_PHASE / 2; // kernel support |t| < 8 input samples
const HISTORY = TAPS_PER_PHASE - 1;
const KAISER_BETA = 7;

function besselI0(x: number): number {
  let sum = 1;
  let term = 1;
  const q = (x * x) / 4;
  for (let k = 1; k < 50; k++) {
    term *= q / (k * k);
    sum += term;
    if (term < sum * 1e-17) break;
  }
  return sum;
}

/** Phase p (1..3) taps: y(n + p/4) = sum_j h[j] * x[n - 7 + j]. */
function designPhases(): Float64Array[] {
  const phases: Float64Array[] = [];
  const i0b = besselI0(KAISER_BETA);
  for (let p = 1; p < TRUE_PEAK_OVERSAMPLING; p++) {
    const h = new Float64Array(TAPS_PER_PHASE);
    let sum = 0;
    for (let j = 0; j < TAPS_PER_PHASE; j++) {
      const t = HALF_SPAN - 1 - j + p / TRUE_PEAK_OVERSAMPLING;
      const r = t / HALF_SPAN;
      const w = Math.abs(r) >= 1 ? 0 : besselI0(KAISER_BETA * Math.sqrt(1 - r * r)) / i0b;
      const sinc = t === 0 ? 1 : Math.sin(Math.PI * t) / (Math.PI * t);
      h[j] = sinc * w;
      sum += sinc * w;
    }
    for (let j = 0; j < TAPS_PER_PHASE; j++) h[j] = (h[j] ?? 0) / sum;
    phases.push(h);
  }
  return phases;
}

const PHASES = designPhases();

/** Largest sum of |taps| over the phases: |interpolated| <= this x local max |input|. */
const L1_BOUND = Math.max(...PHASES.map((h) => h.reduce((s, v) => s + Math.abs(v), 0)));

/** Copies of the interpolator taps, for inspection and tests. */
export function truePeakInterpolatorPhases(): Float64Array[] {
  return PHASES.map((h) => Float64Array.from(h));
}

const SKIP_BLOCK = 16;

// Folded taps (see processChunk). Phase 3 equals phase 1 reversed by construction.
const FOLD_EVEN = new Float64Array(HALF_SPAN);
const FOLD_ODD = new Float64Array(HALF_SPAN);
const FOLD_MID = new Float64Array(HALF_SPAN);
{
  const h1 = PHASES[0] as Float64Array;
  const h2 = PHASES[1] as Float64Array;
  for (let j = 0; j < HALF_SPAN; j++) {
    const a = h1[j] ?? 0;
    const b = h1[TAPS_PER_PHASE - 1 - j] ?? 0;
    FOLD_EVEN[j] = (a + b) / 2;
    FOLD_ODD[j] = (a - b) / 2;
    FOLD_MID[j] = h2[j] ?? 0;
  }
}

/**
 * Streaming true-peak and sample-peak meter. Work buffers are sized at construction;
 * process() allocates nothing. Blocks whose neighbourhood cannot exceed the running
 * peak (local max x L1_BOUND <= peak) are skipped; this is exact, not an approximation.
 */
export class TruePeakMeter {
  readonly channelCount: number;
  private readonly chunkFrames: number;
  private readonly buffers: Float64Array[];
  private readonly blockMax: Float64Array;
  private readonly tail: Float64Array;
  private readonly truePeak: Float64Array;
  private readonly samplePeak: Float64Array;
  private framesSeen = 0;

  constructor(channelCount: number, chunkFrames = 4096) {
    if (!Number.isInteger(channelCount) || channelCount < 1) throw new Error(`true-peak meter needs >= 1 channel, got ${channelCount}`);
    this.channelCount = channelCount;
    this.chunkFrames = Math.max(SKIP_BLOCK, Math.ceil(chunkFrames / SKIP_BLOCK) * SKIP_BLOCK);
    this.buffers = [];
    for (let c = 0; c < channelCount; c++) this.buffers.push(new Float64Array(HISTORY + this.chunkFrames));
    this.blockMax = new Float64Array(Math.ceil((HISTORY + this.chunkFrames) / SKIP_BLOCK) + 1);
    this.tail = new Float64Array(HISTORY + TAPS_PER_PHASE);
    this.truePeak = new Float64Array(channelCount);
    this.samplePeak = new Float64Array(channelCount);
  }

  reset(): void {
    for (const b of this.buffers) b.fill(0);
    this.truePeak.fill(0);
    this.samplePeak.fill(0);
    this.framesSeen = 0;
  }

  process(channels: readonly (Float32Array | Float64Array)[], offset: number, frameCount: number): void {
    let done = 0;
    while (done < frameCount) {
      const n = Math.min(this.chunkFrames, frameCount - done);
      for (let c = 0; c < this.channelCount; c++) {
        const src = channels[c];
        const buf = this.buffers[c];
        if (src === undefined || buf === undefined) throw new Error(`true-peak meter: missing channel ${c}`);
        this.processChunk(c, buf, src, offset + done, n);
      }
      done += n;
    }
    this.framesSeen += frameCount;
  }

  private processChunk(c: number, buf: Float64Array, src: Float32Array | Float64Array, start: number, n: number): void {
    let sp = this.samplePeak[c] ?? 0;
    for (let i = 0; i < n; i++) {
      const x = src[start + i] ?? 0;
      buf[HISTORY + i] = x;
      const a = x < 0 ? -x : x;
      if (a > sp) sp = a;
    }
    this.samplePeak[c] = sp;
    let peak = Math.max(this.truePeak[c] ?? 0, sp);
    // Block maxima over the buffer, for the exact skip test.
    const len = HISTORY + n;
    const nb = Math.ceil(len / SKIP_BLOCK);
    const bm = this.blockMax;
    for (let b = 0; b < nb; b++) {
      let m = 0;
      const e = Math.min(len, (b + 1) * SKIP_BLOCK);
      for (let q = b * SKIP_BLOCK; q < e; q++) {
        const v = buf[q] ?? 0;
        const a = v < 0 ? -v : v;
        if (a > m) m = a;
      }
      bm[b] = m;
    }
    // Interpolate between buffer positions q = 7 .. n + 6 (support q - 7 .. q + 8).
    // Phase 3 is phase 1 reversed and phase 2 is symmetric, so fold the window:
    // s_j = x_j + x_(15-j), d_j = x_j - x_(15-j); y1,3 = sum(E_j s_j) +- sum(O_j d_j), y2 = sum(M_j s_j).
    const E = FOLD_EVEN;
    const O = FOLD_ODD;
    const M = FOLD_MID;
    // Unrolled by hand: about 2x faster than the tap loop in V8.
    const e0 = E[0] ?? 0;
    const o0 = O[0] ?? 0;
    const m0 = M[0] ?? 0;
    const e1 = E[1] ?? 0;
    const o1 = O[1] ?? 0;
    const m1 = M[1] ?? 0;
    const e2 = E[2] ?? 0;
    const o2 = O[2] ?? 0;
    const m2 = M[2] ?? 0;
    const e3 = E[3] ?? 0;
    const o3 = O[3] ?? 0;
    const m3 = M[3] ?? 0;
    const e4 = E[4] ?? 0;
    const o4 = O[4] ?? 0;
    const m4 = M[4] ?? 0;
    const e5 = E[5] ?? 0;
    const o5 = O[5] ?? 0;
    const m5 = M[5] ?? 0;
    const e6 = E[6] ?? 0;
    const o6 = O[6] ?? 0;
    const m6 = M[6] ?? 0;
    const e7 = E[7] ?? 0;
    const o7 = O[7] ?? 0;
    const m7 = M[7] ?? 0;
    const qEnd = n + HALF_SPAN - 1;
    for (let q0 = HALF_SPAN - 1; q0 < qEnd; q0 += SKIP_BLOCK) {
      const q1 = Math.min(qEnd, q0 + SKIP_BLOCK);
      const bLo = Math.floor((q0 - (HALF_SPAN - 1)) / SKIP_BLOCK);
      const bHi = Math.min(nb - 1, Math.floor((q1 - 1 + HALF_SPAN) / SKIP_BLOCK));
      let local = 0;
      for (let b = bLo; b <= bHi; b++) local = Math.max(local, bm[b] ?? 0);
      if (local * L1_BOUND <= peak) continue;
      for (let q = q0; q < q1; q++) {
        const b = q - (HALF_SPAN - 1);
        const a0 = buf[b + 0] ?? 0;
        const z0 = buf[b + 15] ?? 0;
        const a1 = buf[b + 1] ?? 0;
        const z1 = buf[b + 14] ?? 0;
        const a2 = buf[b + 2] ?? 0;
        const z2 = buf[b + 13] ?? 0;
        const a3 = buf[b + 3] ?? 0;
        const z3 = buf[b + 12] ?? 0;
        const a4 = buf[b + 4] ?? 0;
        const z4 = buf[b + 11] ?? 0;
        const a5 = buf[b + 5] ?? 0;
        const z5 = buf[b + 10] ?? 0;
        const a6 = buf[b + 6] ?? 0;
        const z6 = buf[b + 9] ?? 0;
        const a7 = buf[b + 7] ?? 0;
        const z7 = buf[b + 8] ?? 0;
        const ev = e0 * (a0 + z0) + e1 * (a1 + z1) + e2 * (a2 + z2) + e3 * (a3 + z3) + e4 * (a4 + z4) + e5 * (a5 + z5) + e6 * (a6 + z6) + e7 * (a7 + z7);
        const od = o0 * (a0 - z0) + o1 * (a1 - z1) + o2 * (a2 - z2) + o3 * (a3 - z3) + o4 * (a4 - z4) + o5 * (a5 - z5) + o6 * (a6 - z6) + o7 * (a7 - z7);
        let mid = m0 * (a0 + z0) + m1 * (a1 + z1) + m2 * (a2 + z2) + m3 * (a3 + z3) + m4 * (a4 + z4) + m5 * (a5 + z5) + m6 * (a6 + z6) + m7 * (a7 + z7);
        let y1 = ev + od;
        let y3 = ev - od;
        if (y1 < 0) y1 = -y1;
        if (y3 < 0) y3 = -y3;
        if (mid < 0) mid = -mid;
        if (y1 > peak) peak = y1;
        if (y3 > peak) peak = y3;
        if (mid > peak) peak = mid;
      }
    }
    this.truePeak[c] = peak;
    buf.copyWithin(0, n, n + HISTORY);
  }

  /** Peak of the 4x-interpolated signal per channel, linear, including the pending tail. */
  truePeakLinear(channel: number): number {
    const buf = this.buffers[channel];
    if (buf === undefined) throw new Error(`true-peak meter: no channel ${channel}`);
    let peak = Math.max(this.truePeak[channel] ?? 0, this.samplePeak[channel] ?? 0);
    if (this.framesSeen === 0) return peak;
    // The last 8 positions still wait for look-ahead; the signal is followed by silence.
    const t = this.tail;
    t.fill(0);
    for (let i = 0; i < HISTORY; i++) t[i] = buf[i] ?? 0;
    for (let q = HALF_SPAN - 1; q < HISTORY; q++) {
      const base = q - (HALF_SPAN - 1);
      for (const h of PHASES) {
        let y = 0;
        for (let j = 0; j < TAPS_PER_PHASE; j++) y += (h[j] ?? 0) * (t[base + j] ?? 0);
        const a = Math.abs(y);
        if (a > peak) peak = a;
      }
    }
    return peak;
  }

  samplePeakLinear(channel: number): number {
    return this.samplePeak[channel] ?? 0;
  }

  /** Maximum over channels, dB TP (-Infinity for silence). */
  truePeakDbtp(): number {
    let p = 0;
    for (let c = 0; c < this.channelCount; c++) p = Math.max(p, this.truePeakLinear(c));
    return 20 * Math.log10(p);
  }

  /** Maximum over channels, dBFS (-Infinity for silence). */
  samplePeakDbfs(): number {
    let p = 0;
    for (let c = 0; c < this.channelCount; c++) p = Math.max(p, this.samplePeak[c] ?? 0);
    return 20 * Math.log10(p);
  }
}
