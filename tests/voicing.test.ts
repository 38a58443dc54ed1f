// Voicing: E12 / E24 values from IEC 60063 (IEC 60063:2015, confirmed); the first-order
// corner f = 1/(2·pi·R·C) is the textbook half-power point.
import { describe, expect, it } from 'vitest';
import { fitToneNetwork } from '../src/dsp/analysis/voicing.ts';
import { NETLIST_SCHEMA, type Netlist } from '../src/dsp/circuit/netlist.ts';

const fc = (r: number, c: number) => 1 / (2 * Math.PI * r * c);

function lowPass(ohms: number, farads: number): Netlist {
  return {
    schema: NETLIST_SCHEMA,
    ground: '0',
    input: { node: 'a', ohms: 0 },
    output: { node: 'b' },
    elements: [
      { id: 'R1', kind: 'resistor', nodes: ['a', 'b'], ohms },
      { id: 'C1', kind: 'capacitor', nodes: ['b', '0'], farads },
    ],
  };
}
const net = { elementIds: ['R1', 'C1'], drivenFrom: 'a', outputNode: 'b' };

describe('corner-frequency fit', () => {
  it('E12: 1 kHz with 10 k needs 15.9 nF, the nearest E12 value in log distance is 15 nF', () => {
    const r = fitToneNetwork(lowPass(10e3, 10e-9), net, ['C1'], { kind: 'corner', hertz: 1000, response: 'low-pass' }, { series: 'E12' });
    expect(r.values.C1).toBeCloseTo(15e-9, 20);
    expect(Math.abs(r.cornerHz! / fc(10e3, 15e-9) - 1)).toBeLessThan(1e-5); // half-power point found on the sweep, refined by bisection
    expect(r.fitError).toBeCloseTo(fc(10e3, 15e-9) / 1000 - 1, 4);
    expect(r.insertionLossDb).toBeLessThan(0.01); // an RC low-pass passes its low end without loss
  });
  it('E24 gets closer: 16 nF (994.7 Hz)', () => {
    const r = fitToneNetwork(lowPass(10e3, 10e-9), net, ['C1'], { kind: 'corner', hertz: 1000, response: 'low-pass' }, { series: 'E24' });
    expect(r.values.C1).toBeCloseTo(16e-9, 20);
    expect(Math.abs(r.cornerHz! / fc(10e3, 16e-9) - 1)).toBeLessThan(1e-5);
  });
  it('high-pass: 100 nF and 50 Hz needs 31.8 k -> 33 k (E12)', () => {
    const hp: Netlist = {
      schema: NETLIST_SCHEMA,
      ground: '0',
      input: { node: 'a', ohms: 0 },
      output: { node: 'b' },
      elements: [
        { id: 'C1', kind: 'capacitor', nodes: ['a', 'b'], farads: 100e-9 },
        { id: 'R1', kind: 'resistor', nodes: ['b', '0'], ohms: 10e3 },
      ],
    };
    const r = fitToneNetwork(hp, net, ['R1'], { kind: 'corner', hertz: 50, response: 'high-pass' });
    expect(r.values.R1).toBe(33e3);
    expect(Math.abs(r.cornerHz! / fc(33e3, 100e-9) - 1)).toBeLessThan(1e-5);
  });
});

describe('target-curve fit', () => {
  const target = (offsetDb: number) =>
    [50, 200, 1000, 3000, 10000].map((hz) => {
      const w = 2 * Math.PI * hz * 10e3 * 22e-9;
      return { hertz: hz, db: -10 * Math.log10(1 + w * w) + offsetDb };
    });
  it('recovers the E12 capacitor that produced the curve, exactly', () => {
    const r = fitToneNetwork(lowPass(10e3, 4.7e-9), net, ['C1'], { kind: 'curve', points: target(0), matchLevel: false });
    expect(r.values.C1).toBeCloseTo(22e-9, 20);
    expect(r.fitError).toBeLessThan(1e-6);
  });
  it('ignores a level offset unless told not to, and reports the divider loss as insertion loss', () => {
    const r = fitToneNetwork(lowPass(10e3, 4.7e-9), net, ['C1'], { kind: 'curve', points: target(-6) });
    expect(r.values.C1).toBeCloseTo(22e-9, 20);
    // a 10 k / 10 k divider in front: 20·log10(1/2) = -6.02 dB of insertion loss
    const div: Netlist = { ...lowPass(10e3, 1e-9), elements: [...lowPass(10e3, 1e-9).elements, { id: 'R2', kind: 'resistor', nodes: ['b', '0'], ohms: 10e3 }] };
    const d = fitToneNetwork(div, { ...net, elementIds: ['R1', 'C1', 'R2'] }, ['C1'], { kind: 'corner', hertz: 5000, response: 'low-pass' });
    expect(d.insertionLossDb).toBeCloseTo(6.02, 2);
    // two resistors and R1 || R2 = 5 k: corner 1/(2 pi 5k C) picks C = 6.8 nF (E12) for 5 kHz (6.37 nF ideal)
    expect(d.values.C1).toBeCloseTo(6.8e-9, 20);
  });
  it('refuses a part that is not in the network', () => {
    expect(() => fitToneNetwork(lowPass(10e3, 1e-9), net, ['C9'], { kind: 'corner', hertz: 1000, response: 'low-pass' })).toThrow(/C9/);
  });
});
