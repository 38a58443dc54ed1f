// Live loudness match: each slot's sound measured with the project's BS.1770 K-weighting
// (loudness.ts: the same coefficients and the same -0.691 + 10·log10(mean square) as the file
// meter and the client pack) over a sliding window, and a match gain for B that moves slowly
// toward the measured difference. Allocation-free per block: everything is pre-allocated.
//
// The window is the short-term window of EBU Tech 3341 (3 s, ungated mean square); a window
// whose loudness is under the BS.1770 absolute gate (-70 LUFS) on either slot holds the gain.
import { energyToLufs, gainToMatchDb, kWeightedEnergy, kWeightingCoefficients, type KWeighting } from './loudness.ts';

/** Sliding window, seconds (EBU Tech 3341 short-term loudness). */
export const MATCH_WINDOW_SECONDS = 3;
/** Sub-block the window moves by, seconds (BS.1770 block step: 100 ms). */
export const MATCH_STEP_SECONDS = 0.1;
/** The match gain moves at most this fast, dB per second (slow enough not to pump with playing). */
export const MATCH_SLEW_DB_PER_SECOND = 4;
/** Largest correction, dB either way. */
export const MATCH_RANGE_DB = 40;
/** BS.1770-4 absolute gate, LUFS. */
export const ABSOLUTE_GATE_LUFS = -70;

/**
 * K-weighted mean square over a sliding window of whole sub-blocks, one channel. push() per
 * sample range; `lufs` is the window's loudness (-Infinity until the first sub-block closes).
 */
export class SlidingLoudness {
  private readonly k: KWeighting;
  /** Filter state [s1, s2, t1, t2, energy of the open sub-block] and [5] the window sum (stores never box). */
  private readonly st = new Float64Array(6);
  private readonly ring: Float64Array;
  private readonly subLen: number;
  private pos = 0;
  private filled = 0;
  private head = 0;
  /** Sub-blocks closed so far (the match steps on them). */
  closed = 0;

  constructor(sampleRateHz: number, windowSeconds = MATCH_WINDOW_SECONDS, stepSeconds = MATCH_STEP_SECONDS) {
    this.k = kWeightingCoefficients(sampleRateHz);
    this.subLen = Math.max(1, Math.round(stepSeconds * sampleRateHz));
    this.ring = new Float64Array(Math.max(1, Math.round(windowSeconds / stepSeconds)));
  }

  reset(): void {
    this.st.fill(0);
    this.ring.fill(0);
    this.pos = 0;
    this.filled = 0;
    this.head = 0;
    this.closed = 0;
  }

  /** Window loudness, LUFS. */
  get lufs(): number {
    return this.filled === 0 ? -Infinity : energyToLufs(Math.max(0, this.st[5]!) / (this.filled * this.subLen));
  }

  /** Whether the window holds its full length of sound. */
  get full(): boolean {
    return this.filled === this.ring.length;
  }

  push(x: Float64Array, off: number, len: number): void {
    const st = this.st,
      end = off + len;
    let i = off;
    while (i < end) {
      const take = Math.min(end - i, this.subLen - this.pos);
      kWeightedEnergy(this.k, st, 0, x, i, i + take);
      // a non-finite sample would poison the window: start again from silence
      if (!Number.isFinite(st[0]! + st[1]! + st[2]! + st[3]! + st[4]!)) {
        this.reset();
        return;
      }
      i += take;
      this.pos += take;
      if (this.pos === this.subLen) {
        // close the sub-block: it replaces the oldest in the window
        const ring = this.ring,
          h = this.head;
        st[5] = st[5]! - ring[h]! + st[4]!;
        ring[h] = st[4]!;
        st[4] = 0;
        this.head = h + 1 === ring.length ? 0 : h + 1;
        if (this.filled < ring.length) this.filled++;
        this.pos = 0;
        this.closed++;
      }
    }
  }
}

/**
 * The A/B match: measures A and B (each as it leaves its slot, before the monitor mix) and the
 * output, and gives the gain for B that brings B to A's loudness. The offset shown to the user is
 * `offsetDb` (B against A, unmatched), the same quantity a meter on the output reads when the
 * monitor switches between A and B with the match off.
 */
export class LoudnessMatch {
  readonly a: SlidingLoudness;
  readonly b: SlidingLoudness;
  readonly out: SlidingLoudness;
  private readonly slewPerSubBlock: number;
  /** [current gain dB, target dB, gain at the start of the segment (linear), at its end (linear)] */
  private readonly g = Float64Array.of(0, 0, 1, 1);
  /** Off until asked for (set-loudness-match): an offline render plays each slot as it is. */
  enabled = false;

  constructor(sampleRateHz: number) {
    this.a = new SlidingLoudness(sampleRateHz);
    this.b = new SlidingLoudness(sampleRateHz);
    this.out = new SlidingLoudness(sampleRateHz);
    this.slewPerSubBlock = MATCH_SLEW_DB_PER_SECOND * MATCH_STEP_SECONDS;
  }

  /** B's loudness against A's over the window, dB (NaN while either is silent or not yet measured). */
  get offsetDb(): number {
    const la = this.a.lufs,
      lb = this.b.lufs;
    return la > ABSOLUTE_GATE_LUFS && lb > ABSOLUTE_GATE_LUFS ? lb - la : NaN;
  }

  /** The gain applied to B now, dB (0 when the match is off). */
  get gainDb(): number {
    return this.enabled ? this.g[0]! : 0;
  }

  /**
   * Measure a segment of both slots' levelled outputs and write B's match gain for each sample
   * into gainB[0 … len-1] (linear, ramped across the segment). Call before the monitor mix.
   */
  measure(ya: Float64Array, yb: Float64Array, len: number, gainB: Float64Array): void {
    const closedBefore = this.a.closed;
    this.a.push(ya, 0, len);
    this.b.push(yb, 0, len);
    const g = this.g;
    const steps = this.a.closed - closedBefore;
    if (steps > 0) {
      const off = this.offsetDb;
      // the client pack's gain too (loudness.ts gainToMatchDb): B brought to A
      if (off === off) g[1] = Math.max(-MATCH_RANGE_DB, Math.min(MATCH_RANGE_DB, gainToMatchDb(this.b.lufs, this.a.lufs)));
      const d = g[1]! - g[0]!,
        lim = this.slewPerSubBlock * steps;
      g[0] = g[0]! + (d > lim ? lim : d < -lim ? -lim : d);
    }
    const end = this.enabled ? Math.pow(10, g[0]! / 20) : 1;
    const start = g[3]!;
    const inc = len > 0 ? (end - start) / len : 0;
    for (let q = 0; q < len; q++) gainB[q] = start + inc * (q + 1);
    g[2] = start;
    g[3] = end;
  }

  /** Measure the output (after the mix, the master level and the limiter). */
  measureOutput(y: Float64Array, len: number): void {
    this.out.push(y, 0, len);
  }
}
