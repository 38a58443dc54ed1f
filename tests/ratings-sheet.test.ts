// Worst-case ratings sheet: a designed-in fault for each rating must be reported.
// Ratings: tube library (data sheets, see src/dsp/tubes/library.ts); capacitor and resistor
// buying rules: common practice, tube amplifier design references "Power supply and ratings" (cold-start B+ on coupling caps:
// confirmed forum practice; 80 % / 50 % derating: from memory).
import { describe, expect, it } from 'vitest';
import { ratingsSheet } from '../src/dsp/analysis/ratings-sheet.ts';
import { designCircuit, type Design } from '../src/dsp/circuit/design.ts';
import { CircuitEngine } from '../src/dsp/circuit/engine.ts';
import { TRIODE_INTO_TRIODE } from '../src/dsp/circuit/templates.ts';
import { cleanStage, edit, pentodeStage } from './helpers/designs.ts';

const fast = { maxInputSeconds: 0.05 } as const;
const codesOf = (d: Design) => ratingsSheet(d, fast).findings.map((f) => `${f.severity}:${f.code}`);

describe('capacitor voltage', () => {
  it('a coupling capacitor rated for the warm plate voltage fails at cold start, when the full unloaded B+ stands on it', () => {
    const d = edit(cleanStage(), { replace: [{ id: 'C4', kind: 'capacitor', nodes: ['p1', 'out'], farads: 22e-9, ratedVolts: 250 }] });
    const s = ratingsSheet(d, fast);
    const c = s.capacitors.find((x) => x.id === 'C4')!;
    // tubes not conducting: no current in the plate load, so the plate sits at the supply EMF (Ohm's law)
    expect(c.volts.cold).toBeCloseTo(300, 3);
    expect(c.volts.warm!).toBeLessThan(250);
    expect(c.worstCondition).toBe('cold');
    expect(c.buyVolts).toBe(400); // 300 V / 0.8 = 375 V -> next common rating 400 V
    const f = s.findings.filter((x) => x.code === 'capacitor-voltage');
    expect(f.map((x) => x.severity)).toEqual(['error']);
    expect(f[0]!.message).toMatch(/cold start/);
  });
  it('a capacitor under 80 % of its rating passes; above 80 % warns', () => {
    expect(codesOf(edit(cleanStage(), { replace: [{ id: 'C4', kind: 'capacitor', nodes: ['p1', 'out'], farads: 22e-9, ratedVolts: 400 }] }))).not.toContain(
      'warning:capacitor-voltage',
    );
    expect(codesOf(edit(cleanStage(), { replace: [{ id: 'C4', kind: 'capacitor', nodes: ['p1', 'out'], farads: 22e-9, ratedVolts: 350 }] }))).toContain(
      'warning:capacitor-voltage',
    );
  });
});

describe('resistor power', () => {
  it('reports a plate resistor rated below its dissipation, and the wattage to buy', () => {
    const d = edit(TRIODE_INTO_TRIODE, { replace: [{ id: 'R3', kind: 'resistor', nodes: ['b1', 'p1'], ohms: 100e3, ratedWatts: 0.125 }] });
    const s = ratingsSheet(d, fast);
    const op = new CircuitEngine(designCircuit(d), 48000).operatingPoint();
    const expected = (op.nodes.b1! - op.nodes.p1!) ** 2 / 100e3; // P = V^2 / R
    const r = s.resistors.find((x) => x.id === 'R3')!;
    expect(r.watts.warm).toBeCloseTo(expected, 12);
    expect(expected).toBeGreaterThan(0.125);
    expect(r.buyWatts).toBe(expected / 0.5 <= 0.25 ? 0.25 : 0.5); // 50 % derating (from memory): twice the dissipation, next common size
    expect(s.findings.filter((x) => x.code === 'resistor-power').map((x) => x.severity)).toEqual(['error']);
  });
});

describe('tube ratings (library maxima from the data sheets)', () => {
  it('plate dissipation over 1 W (12AX7, RCA/Sylvania sheet, confirmed)', () => {
    const d = edit(cleanStage(), {
      replace: [
        { id: 'R1', kind: 'resistor', nodes: ['bp', 'b1'], ohms: 100 },
        { id: 'R3', kind: 'resistor', nodes: ['b1', 'p1'], ohms: 10e3 },
        { id: 'R4', kind: 'resistor', nodes: ['k1', '0'], ohms: 47 },
      ],
    });
    const s = ratingsSheet(d, fast);
    expect(s.tubes[0]!.plateWatts.warm!).toBeGreaterThan(1);
    expect(codesOf(d)).toContain('error:plate-dissipation');
  });
  it('plate voltage over 300 V (12AX7 sheet, confirmed)', () => {
    // a starved stage (100 k cathode resistor) off 450 V: almost no plate current, so the plate sits near B+
    const d = {
      ...edit(cleanStage(), { replace: [{ id: 'R4', kind: 'resistor', nodes: ['k1', '0'], ohms: 100e3 }] }),
      supply: { node: 'bp', volts: 450, ohms: 1000, filterFarads: 47e-6 },
    };
    expect(codesOf(d)).toContain('error:plate-voltage');
  });
  it('screen voltage over 200 V and screen dissipation over 0.2 W (EF86, from memory)', () => {
    const d = edit(pentodeStage(), { replace: [{ id: 'R5', kind: 'resistor', nodes: ['b1', 's1'], ohms: 10e3 }] });
    const c = codesOf(d);
    expect(c).toContain('error:screen-voltage');
    expect(c).toContain('error:screen-dissipation');
  });
  it('cathode current over 15 mA (12AT7 / ECC81 sheet, confirmed)', () => {
    const d = edit(cleanStage(), {
      replace: [
        { id: 'V1', kind: 'tube', type: '12AT7', sample: 1, nodes: { plate: 'p1', grid: 'g1', cathode: 'k1' } },
        { id: 'R3', kind: 'resistor', nodes: ['b1', 'p1'], ohms: 2.2e3 },
        { id: 'R4', kind: 'resistor', nodes: ['k1', '0'], ohms: 47 },
        { id: 'R1', kind: 'resistor', nodes: ['bp', 'b1'], ohms: 100 },
      ],
    });
    expect(ratingsSheet(d, fast).tubes[0]!.cathodeAmps.warm!).toBeGreaterThan(0.015);
    expect(codesOf(d)).toContain('error:cathode-current');
  });
  it('heater-cathode voltage over 180 V (12AX7, confirmed) with the heater elevation that fixes it', () => {
    // a cathode follower straight off a 350 V B+: the cathode sits near 200 V
    const follower = (heaterVolts: number): Design =>
      edit(cleanStage({ supply: { node: 'bp', volts: 350, ohms: 1000, filterFarads: 47e-6 } }), {
        replace: [
          { id: 'R2', kind: 'resistor', nodes: ['g1', 'gb'], ohms: 1e6 },
          { id: 'V1', kind: 'tube', type: '12AX7', sample: 1, nodes: { plate: 'b1', grid: 'g1', cathode: 'k1' }, heaterVolts },
          { id: 'R3', kind: 'resistor', nodes: ['b1', 'gb'], ohms: 100e3 },
          { id: 'R4', kind: 'resistor', nodes: ['k1', '0'], ohms: 100e3 },
          { id: 'C3', kind: 'capacitor', nodes: ['gb', '0'], farads: 1e-6 },
          { id: 'C4', kind: 'capacitor', nodes: ['k1', 'out'], farads: 22e-9 },
        ],
        add: [{ id: 'R5', kind: 'resistor', nodes: ['gb', '0'], ohms: 300e3 }],
      });
    const bad = ratingsSheet(follower(0), fast);
    const hk = bad.tubes[0]!.heaterCathode;
    expect(hk.worstVolts).toBeGreaterThan(180);
    const f = bad.findings.find((x) => x.code === 'heater-cathode')!;
    expect(f.severity).toBe('error');
    expect(f.message).toMatch(/elevate the heater/);
    const fix = hk.fixElevationVolts!;
    // any elevation in the range keeps every cathode voltage within 180 V of the heater
    const mid = Math.round((fix[0] + fix[1]) / 2);
    expect(hk.cathodeVoltsRange[1] - mid).toBeLessThanOrEqual(180);
    expect(mid - hk.cathodeVoltsRange[0]).toBeLessThanOrEqual(180);
    expect(ratingsSheet(follower(mid), fast).findings.map((x) => x.code)).not.toContain('heater-cathode');
  });
  it('grid-circuit resistance: an error with cathode bias, a note with grid-leak bias', () => {
    const big = edit(cleanStage(), { replace: [{ id: 'R2', kind: 'resistor', nodes: ['g1', '0'], ohms: 10e6 }] });
    expect(codesOf(big)).toContain('error:grid-circuit-resistance');
    const leak = edit(big, {
      remove: ['R4', 'C3'],
      replace: [{ id: 'V1', kind: 'tube', type: '12AX7', sample: 1, nodes: { plate: 'p1', grid: 'g1', cathode: '0' } }],
    });
    const c = codesOf(leak);
    expect(c).toContain('note:grid-leak-bias');
    expect(c).not.toContain('error:grid-circuit-resistance');
    expect(ratingsSheet(leak, fast).tubes[0]!.gridCircuitOhms).toBeCloseTo(10e6, -3);
  });
});

describe('conditions', () => {
  it('maximum input raises peak voltages above idle and the sheet records the test signal', () => {
    const s = ratingsSheet(cleanStage(), fast);
    expect(s.conditions.maxInput?.peakVolts).toBe(2);
    // the grid resistor sees at least the input's 2 V peak (less the coupling divider); grid
    // current then charges the coupling capacitor (blocking), pushing the negative peaks further
    const r2 = s.resistors.find((x) => x.id === 'R2')!;
    expect(r2.peakVolts).toBeGreaterThan(1.8);
    expect(r2.watts.maxInput!).toBeGreaterThan(r2.watts.warm!);
  });
});
