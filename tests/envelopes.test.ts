// Envelopes: sections of one tube share one heater in the heater budget (common practice: a
// 12AX7 is one 6.3 V 0.3 A heater for both triodes, RCA sheet; an ECF80's triode and pentode share
// one 0.43 A heater, Philips sheet from memory).
import { describe, expect, it } from 'vitest';
import { heaterLoads } from '../src/dsp/analysis/design-supply.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import type { Design, TubePart } from '../src/dsp/circuit/design.ts';

const tube = (id: string, type: string, pentode = false): TubePart => ({
  id,
  kind: 'tube',
  type,
  sample: 1,
  nodes: { plate: `p${id}`, grid: `g${id}`, cathode: '0', ...(pentode ? { screen: `s${id}` } : {}) },
});
const withTubes = (tubes: TubePart[]): Design => ({ ...TEMPLATES['triode-triode']!, parts: tubes });

describe('heater budget by envelope', () => {
  it('two 12AX7 sections: one heater; three: two heaters', () => {
    expect(heaterLoads(withTubes([tube('A', '12AX7'), tube('B', '12AX7')])).map((h) => h.amps)).toEqual([0.3]);
    expect(heaterLoads(withTubes([tube('A', '12AX7'), tube('B', '12AX7'), tube('C', '12AX7')])).length).toBe(2);
  });
  it('the triode and pentode of an ECF80 share one 6.3 V 0.43 A heater; a second pentode opens a second envelope', () => {
    const one = heaterLoads(withTubes([tube('T', 'ECF80 triode'), tube('P', 'ECF80 pentode', true)]));
    expect(one).toEqual([{ volts: 6.3, amps: 0.43, label: 'ECF80 T+P' }]);
    expect(heaterLoads(withTubes([tube('T', 'ECF80 triode'), tube('P', 'ECF80 pentode', true), tube('Q', 'ECF80 pentode', true)])).length).toBe(2);
  });
});
