// Spread: seeded, reproducible; tube samples over 0.66-1.33 x (a tube tester's article on sample spread,
// confirmed); run 0 is the nominal design, equal to its operating point.
import { describe, expect, it } from 'vitest';
import { runFactors, runStream, spread, spreadRun, tubeCaseDesign, TUBE_SPREAD } from '../src/dsp/analysis/spread.ts';
import { designCircuit } from '../src/dsp/circuit/design.ts';
import { CircuitEngine } from '../src/dsp/circuit/engine.ts';
import { TRIODE_INTO_TRIODE } from '../src/dsp/circuit/templates.ts';
import { gainAt } from '../src/dsp/analysis/ac.ts';
import { spreadRunsParallel } from '../src/cli/spread-workers.ts';

const D = TRIODE_INTO_TRIODE;

describe('spread', () => {
  it('the same seed gives identical JSON; another seed differs', () => {
    const a = JSON.stringify(spread(D, 5, 42)),
      b = JSON.stringify(spread(D, 5, 42));
    expect(a).toBe(b);
    expect(JSON.stringify(spread(D, 5, 43))).not.toBe(a);
  });
  it('the nominal run equals the design operating point and AC gain', () => {
    const op = new CircuitEngine(designCircuit(D), 48000).operatingPoint();
    const r = spreadRun(D, 7, 0);
    expect(r.tubes.V1!.plateAmps).toBe(op.tubes.V1!.plateAmps);
    expect(r.tubes.V2!.vpk).toBe(op.tubes.V2!.vpk);
    expect(r.nodes).toEqual(op.nodes);
    expect(r.gainDb1k!).toBeCloseTo(20 * Math.log10(gainAt(designCircuit(D), op, 1000)), 12);
  });
  it('draws tube samples within 0.66-1.33 and part values within their tolerance', () => {
    for (let k = 1; k < 200; k++) {
      const f = runFactors(D, 1, k);
      for (const s of Object.values(f.tubeSamples)) {
        expect(s).toBeGreaterThanOrEqual(TUBE_SPREAD.low);
        expect(s).toBeLessThanOrEqual(TUBE_SPREAD.high);
      }
      expect(Math.abs(f.partFactors.R3! - 1)).toBeLessThanOrEqual(0.05); // R3 is a 5 % part
      expect(Math.abs(f.partFactors.C1! - 1)).toBeLessThanOrEqual(0.2); // C1 a 20 % electrolytic
    }
  });
  it('the random stream is uniform enough (mean 0.5, variance 1/12 of a uniform variable)', () => {
    const s = runStream(9, 3);
    let m = 0,
      v = 0;
    const n = 20000;
    const xs = Array.from({ length: n }, () => s());
    for (const x of xs) m += x / n;
    for (const x of xs) v += (x - m) ** 2 / n;
    expect(m).toBeCloseTo(0.5, 2);
    expect(v).toBeCloseTo(1 / 12, 2);
  });
  it('a stronger tube draws more plate current (low < nominal < high)', () => {
    const ip = (w: 'low' | 'nominal' | 'high') => new CircuitEngine(designCircuit(tubeCaseDesign(D, w)), 48000).operatingPoint().tubes.V1!.plateAmps;
    expect(ip('low')).toBeLessThan(ip('nominal'));
    expect(ip('nominal')).toBeLessThan(ip('high'));
  });
  it('worker threads give the same runs as one thread', async () => {
    const one = spread(D, 4, 5).results;
    const many = await spreadRunsParallel(D, 4, 5, 2);
    expect(JSON.stringify(many)).toBe(JSON.stringify(one));
  });
});
