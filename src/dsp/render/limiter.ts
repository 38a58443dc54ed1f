// Output safety limiter: instant attack on the sample peak, exponential release. It bounds the
// output at the ceiling; it is a safety device, not a mastering limiter.

export class PeakLimiter {
  private gain = 1;
  private readonly releaseCoeff: number;
  readonly ceiling: number;
  /** Largest gain reduction since the last read, as a linear factor (1 = none). */
  minGain = 1;

  constructor(sampleRateHz: number, ceilingDbfs = -1, releaseSeconds = 0.08) {
    this.ceiling = Math.pow(10, ceilingDbfs / 20);
    this.releaseCoeff = Math.exp(-1 / (releaseSeconds * sampleRateHz));
  }

  process(x: number): number {
    const a = Math.abs(x);
    const needed = a > this.ceiling ? this.ceiling / a : 1;
    if (needed < this.gain) this.gain = needed;
    else this.gain = needed - (needed - this.gain) * this.releaseCoeff;
    if (this.gain < this.minGain) this.minGain = this.gain;
    const y = x * this.gain;
    // exact bound, whatever the release state
    return y > this.ceiling ? this.ceiling : y < -this.ceiling ? -this.ceiling : y;
  }

  reset(): void {
    this.gain = 1;
    this.minGain = 1;
  }
}
