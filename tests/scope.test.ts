// The scope's ring buffer (src/audio/scope.ts): each slot keeps its own traces from the meter
// reports, so switching what is heard does not splice one slot's voltages into the other's.
import { describe, expect, it } from 'vitest';
import { ScopeBuffer } from '../src/audio/scope.ts';
import type { MeterReport, SlotTrace } from '../src/dsp/realtime/messages.ts';

function report(k: number, a: SlotTrace | null, b: SlotTrace | null, monitored: 'A' | 'B'): MeterReport {
  const t = monitored === 'A' ? a : b;
  return {
    type: 'meter',
    inputPeakVolts: 0,
    outputPeakDbfs: -k,
    gridVolts: t?.gridVolts ?? 0,
    plateVolts: t?.plateVolts ?? [],
    loadFraction: 0.1,
    limiterReductionDb: 0,
    limiterOn: true,
    traceSlot: t ? monitored : null,
    slotTraces: [a, b],
  };
}

describe('scope buffer', () => {
  it("keeps each slot's traces through A/B switches, oldest first, wrapping at its capacity", () => {
    const s = new ScopeBuffer(8);
    for (let k = 0; k < 12; k++) {
      s.push(report(k, { gridVolts: -1 - k, plateVolts: [100 + k, 200 + k] }, { gridVolts: -0.5, plateVolts: [50 + k] }, k % 3 === 0 ? 'B' : 'A'));
    }
    const into = new Float32Array(8);
    expect(s.read('grid', into, 'A')).toBe(8);
    expect(Array.from(into)).toEqual([4, 5, 6, 7, 8, 9, 10, 11].map((k) => -1 - k));
    s.read(1, into, 'A');
    expect(Array.from(into)).toEqual([4, 5, 6, 7, 8, 9, 10, 11].map((k) => 200 + k));
    s.read(0, into, 'B');
    expect(Array.from(into)).toEqual([4, 5, 6, 7, 8, 9, 10, 11].map((k) => 50 + k));
    s.read('output', into);
    expect(Array.from(into)).toEqual([4, 5, 6, 7, 8, 9, 10, 11].map((k) => -k));
  });

  it('marks reports from while a slot was empty as NaN (a gap in its trace)', () => {
    const s = new ScopeBuffer(4);
    s.push(report(0, { gridVolts: -1, plateVolts: [100] }, null, 'A'));
    s.push(report(1, { gridVolts: -1, plateVolts: [100] }, { gridVolts: -2, plateVolts: [60] }, 'A'));
    const into = new Float32Array(4);
    expect(s.read('grid', into, 'B')).toBe(2);
    expect(Number.isNaN(into[0]!)).toBe(true);
    expect(into[1]).toBe(-2);
    expect(() => s.read(9, into, 'A')).toThrow(/no trace/);
    expect(() => new ScopeBuffer(1)).toThrow(/capacity/);
  });
});
