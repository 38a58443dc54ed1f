// The live-quality overload guard (src/audio/overload-guard.ts). Its thresholds are common
// practice for real-time audio (keep the audio work well under the block budget), not from a
// source; these tests check its behaviour over a stream of load reports at the processor's
// ~30 Hz report rate.
import { describe, expect, it } from 'vitest';
import { DEFAULT_OVERLOAD_GUARD, OverloadGuard, overloadMessage } from '../src/audio/overload-guard.ts';

const REPORT_MS = 1000 / 30;

/** Feed `load` (a constant or a function of the report index) for `ms`; returns the steps taken and the end time. */
function feed(g: OverloadGuard, load: number | ((k: number) => number), fromMs: number, ms: number) {
  const steps = [];
  let t = fromMs;
  for (let k = 0; t < fromMs + ms; k++, t += REPORT_MS) {
    const s = g.observe(typeof load === 'number' ? load : load(k), t);
    if (s) steps.push({ ...s, atMs: t });
  }
  return { steps, endMs: t };
}

describe('overload guard', () => {
  it('steps 4x down to 2x once the load has stayed above the threshold for the sustain time, not before', () => {
    const g = new OverloadGuard(4);
    const { steps } = feed(g, 0.95, 0, DEFAULT_OVERLOAD_GUARD.sustainMs + 200);
    expect(steps).toHaveLength(1);
    expect(steps[0]!.from).toBe(4);
    expect(steps[0]!.to).toBe(2);
    expect(steps[0]!.atMs).toBeGreaterThanOrEqual(DEFAULT_OVERLOAD_GUARD.sustainMs);
    expect(steps[0]!.atMs).toBeLessThan(DEFAULT_OVERLOAD_GUARD.sustainMs + 2 * REPORT_MS);
    expect(g.currentFactor).toBe(2);
  });

  it('ignores short spikes: one report in three under the threshold restarts the count', () => {
    const g = new OverloadGuard(4);
    const { steps } = feed(g, (k) => (k % 3 === 2 ? 0.5 : 0.99), 0, 10_000);
    expect(steps).toHaveLength(0);
    expect(g.currentFactor).toBe(4);
  });

  it('under a load that stays high it waits the hold time between steps and stops at 1x', () => {
    const g = new OverloadGuard(8);
    const { steps } = feed(g, 0.97, 0, 20_000);
    expect(steps.map((s) => s.to)).toEqual([4, 2, 1]);
    for (let k = 1; k < steps.length; k++) {
      expect(steps[k]!.atMs - steps[k - 1]!.atMs).toBeGreaterThanOrEqual(DEFAULT_OVERLOAD_GUARD.holdMs + DEFAULT_OVERLOAD_GUARD.sustainMs - REPORT_MS);
    }
    expect(g.currentFactor).toBe(1);
  });

  it('a factor chosen by the user starts a fresh observation; disabled, it never steps', () => {
    const g = new OverloadGuard(4);
    const first = feed(g, 0.95, 0, 900);
    expect(first.steps).toHaveLength(0);
    g.setFactor(8); // the user's choice 900 ms into a high stretch: the count starts again
    const second = feed(g, 0.95, first.endMs, 900);
    expect(second.steps).toHaveLength(0);
    const third = feed(g, 0.95, second.endMs, 300);
    expect(third.steps.map((s) => [s.from, s.to])).toEqual([[8, 4]]);
    const h = new OverloadGuard(4);
    h.enabled = false;
    expect(feed(h, 2, 0, 10_000).steps).toHaveLength(0);
  });

  it('ignores reports that are not numbers, negative or not finite', () => {
    const g = new OverloadGuard(4);
    const bad = [Number.NaN, Number.POSITIVE_INFINITY, -1];
    const { steps } = feed(g, (k) => bad[k % 3]!, 0, 5000);
    expect(steps).toHaveLength(0);
    expect(() => new OverloadGuard(4, { highFraction: 0, sustainMs: 1, holdMs: 1 })).toThrow(/positive/);
  });

  it('says what it did, with the load and both factors', () => {
    const text = overloadMessage({ from: 4, to: 2, loadFraction: 0.912 });
    expect(text).toContain('91 %');
    expect(text).toContain('4×');
    expect(text).toContain('2×');
  });
});
