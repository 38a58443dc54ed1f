// The workspace store: the reducer records one undo step per real change, and the port mirror
// sends only what changed (a sheet that cannot play yet is never sent).
import { describe, expect, it } from 'vitest';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { emptySheet } from '../src/dsp/circuit/edit.ts';
import type { Design } from '../src/dsp/circuit/design.ts';
import { initialState, playableProblem, portSettings, reducer, syncPort, type SyncTarget } from '../src/ui/store/workspace-store.ts';

function recorder(): { port: SyncTarget; calls: string[] } {
  const calls: string[] = [];
  const port: SyncTarget = {
    setDesign: (slot, d) => calls.push(`design ${slot} ${d.name}`),
    setMonitor: (m) => calls.push(`monitor ${m}`),
    setLoudnessMatch: (on) => calls.push(`matched ${on}`),
    setQuality: (f) => calls.push(`quality ${f}`),
    setOverloadGuard: (on) => calls.push(`guard ${on}`),
    setInputCalibration: (v) => calls.push(`calibration ${v}`),
    setLoop: (r) => calls.push(`loop ${r ? r.startSeconds : 'none'}`),
    setSource: (c) => calls.push(`source ${c.name}`),
  };
  return { port, calls };
}

describe('workspace store', () => {
  it('an edit that changes nothing records no undo step; undo and redo restore the designs', () => {
    let s = initialState(null, true);
    const same = reducer(s, { type: 'edit-design', design: s.history.present.A });
    expect(same).toBe(s);
    const other: Design = TEMPLATES['triode-triode']!;
    s = reducer(s, { type: 'edit-design', design: other });
    expect(s.history.past.length).toBe(1);
    expect(s.history.present.A).toBe(other);
    s = reducer(s, { type: 'undo' });
    expect(s.history.present.A).toBe(TEMPLATES['pentode-triode']);
    expect(reducer(reducer(s, { type: 'undo' }), { type: 'redo' }).history.present.A).toBe(other);
  });

  it('the selection is dropped when an undo removes the selected part', () => {
    let s = initialState(null, true);
    const d = s.history.present.A;
    const withExtra: Design = { ...d, parts: [...d.parts, { id: 'R99', kind: 'resistor', nodes: ['g1', '0'], ohms: 1e6 }] };
    s = reducer(s, { type: 'edit-design', design: withExtra, select: 'R99' });
    expect(s.selected).toBe('R99');
    s = reducer(s, { type: 'undo' });
    expect(s.selected).toBeNull();
  });

  it('the port gets everything once, then only what changed; a sheet that cannot play is held back', () => {
    const { port, calls } = recorder();
    let s = initialState(null, true);
    syncPort(port, null, portSettings(s));
    expect(calls.filter((c) => c.startsWith('design')).length).toBe(2);
    expect(calls).toContain('quality 4');
    calls.length = 0;
    const prev = portSettings(s);
    s = reducer(s, { type: 'matched', on: false });
    syncPort(port, prev, portSettings(s));
    expect(calls).toEqual(['matched false']);
    calls.length = 0;
    // an empty sheet's B+ has one connection: it cannot play, and the port keeps the last design
    const sheet = emptySheet();
    expect(playableProblem(sheet)).toMatch(/connects to only one terminal/);
    const before = portSettings(s);
    s = reducer(s, { type: 'edit-design', design: sheet });
    syncPort(port, before, portSettings(s));
    expect(calls).toEqual([]);
  });
});
