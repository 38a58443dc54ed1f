// Output safety limiter: instant attack on the sample peak, exponential release. It bounds the
// output at the ceiling; it is a safety device, not a mastering limiter.

export class PeakLimiter {
  /** [0] the present gain, [1] the smallest gain since the last read (stores never box). */
  private readonly state = Float64Array.of(1, 1);
  private readonly one = new Float64Array(1);
  private readonly releaseCoeff: number;
  readonly ceiling: number;

  /** Largest gain reduction since the last read, as a linear factor (1 = none). */
  get minGain(): number {
    return this.state[1]!;
  }

  set minGain(g: number) {
    this.state[1] = g;
  }

  /** The gain applied to the last sample (1 = not limiting). */
  get gain(): number {
    return this.state[0]!;
  }

  constructor(sampleRateHz: number, ceilingDbfs = -1, releaseSeconds = 0.08) {
    this.ceiling = Math.pow(10, ceilingDbfs / 20);
    this.releaseCoeff = Math.exp(-1 / (releaseSeconds * sampleRateHz));
  }

  /** One sample (tools and tests; the audio path uses processInPlace). */
  process(x: number): number {
    const one = this.one;
    one[0] = x;
    this.processInPlace(one, 1);
    return one[0]!;
  }

  /** The limiter over buf[0 … len-1] in place (the audio path: no number crosses a call). */
  processInPlace(buf: Float64Array, len: number): void {
    const st = this.state,
      c = this.ceiling,
      rel = this.releaseCoeff;
    let gain = st[0]!,
      minGain = st[1]!;
    for (let q = 0; q < len; q++) {
      const x = buf[q]!;
      const a = Math.abs(x);
      const needed = a > c ? c / a : 1;
      gain = needed < gain ? needed : needed - (needed - gain) * rel;
      if (gain < minGain) minGain = gain;
      // Math.min/max, not `y > c ? c : ...`: a branch yielding the (constant) ceiling makes
      // TurboFan merge the result as a tagged number and box it per sample (measured with the
      // inspector's allocation sampling: 2 KB per 128-sample block; none this way)
      buf[q] = Math.max(-c, Math.min(c, x * gain)); // exact bound, whatever the release state
    }
    st[0] = gain;
    st[1] = minGain;
  }

  reset(): void {
    this.state[0] = 1;
    this.state[1] = 1;
  }
}
