// Steps the live quality down when the processor keeps running near its real-time budget.
//
// The worklet reports its own time per block as a fraction of the block's real-time budget
// (about 30 reports a second). When that fraction stays above `highFraction` for `sustainMs`
// the audio thread is close to missing deadlines: a missed deadline is a dropout, heard as a
// click that can be loud through headphones at playing level. The guard then proposes the next
// lower oversampling factor (halving the circuit's work), waits `holdMs` for the reports to
// reflect the change, and may step again; it never steps up on its own (a user's choice to go
// back up starts a fresh observation). Thresholds are common practice for real-time audio
// (keep a core's audio work well under its budget), not from a source.
// Pure logic over the reports (no Web Audio types), so it is tested in Node.
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';
import { LIVE_FACTORS } from '../dsp/realtime/dual-slot-engine.ts';

export interface OverloadGuardOptions {
  /** Load fraction above which the processor counts as near its limit. */
  readonly highFraction: number;
  /** How long the load must stay above it before stepping down, ms. */
  readonly sustainMs: number;
  /** After a step, how long to wait before another, ms. */
  readonly holdMs: number;
}

export const DEFAULT_OVERLOAD_GUARD: OverloadGuardOptions = { highFraction: 0.85, sustainMs: 1000, holdMs: 2000 };

export interface OverloadStep {
  readonly from: OversamplingFactor;
  readonly to: OversamplingFactor;
  /** The load that triggered the step (the lowest report of the sustained stretch). */
  readonly loadFraction: number;
}

export class OverloadGuard {
  private readonly opts: OverloadGuardOptions;
  private factor: OversamplingFactor;
  /** Start of the present stretch of high reports (ms), or null. */
  private highSinceMs: number | null = null;
  /** Lowest load in the present stretch. */
  private stretchMin = Infinity;
  private holdUntilMs = -Infinity;
  enabled = true;

  constructor(factor: OversamplingFactor, options: OverloadGuardOptions = DEFAULT_OVERLOAD_GUARD) {
    if (!(options.highFraction > 0 && options.sustainMs >= 0 && options.holdMs >= 0)) throw new Error('overload guard: thresholds must be positive');
    this.opts = options;
    this.factor = factor;
  }

  /** The factor the guard believes is running. */
  get currentFactor(): OversamplingFactor {
    return this.factor;
  }

  /** The user (or anything else) chose a factor: observe afresh from now. */
  setFactor(factor: OversamplingFactor): void {
    this.factor = factor;
    this.highSinceMs = null;
    this.stretchMin = Infinity;
    this.holdUntilMs = -Infinity;
  }

  /**
   * One load report at time nowMs. Returns the step to take (the caller applies it) or null.
   * Reports that are not finite or negative are ignored, as is everything while disabled.
   */
  observe(loadFraction: number, nowMs: number): OverloadStep | null {
    if (!this.enabled || !Number.isFinite(loadFraction) || loadFraction < 0 || !Number.isFinite(nowMs)) return null;
    if (nowMs < this.holdUntilMs) return null;
    if (loadFraction <= this.opts.highFraction) {
      this.highSinceMs = null;
      this.stretchMin = Infinity;
      return null;
    }
    if (this.highSinceMs === null) this.highSinceMs = nowMs;
    this.stretchMin = Math.min(this.stretchMin, loadFraction);
    if (nowMs - this.highSinceMs < this.opts.sustainMs) return null;
    const to = LIVE_FACTORS.filter((f) => f < this.factor).at(-1); // the next live factor down (ascending list)
    if (to === undefined) return null; // already at the lowest: nothing left to shed
    const step: OverloadStep = { from: this.factor, to, loadFraction: this.stretchMin };
    this.factor = to;
    this.highSinceMs = null;
    this.stretchMin = Infinity;
    this.holdUntilMs = nowMs + this.opts.holdMs;
    return step;
  }
}

/** What the workspace tells the user after a step. */
export function overloadMessage(step: OverloadStep): string {
  return `The audio thread stayed near its limit (load ${Math.round(step.loadFraction * 100)} %), so live quality was lowered from ${step.from}× to ${step.to}× to avoid dropouts (clicks). Choose a higher quality again once the machine is less busy, or render offline for the best quality.`;
}
