import { describe, expect, it } from 'vitest';
import { estimateSupply, rippleWaveform, type SupplyInput } from '../src/dsp/analysis/supply.ts';
import { nextCapacitorVoltageRating, nextResistorWattage } from '../src/dsp/parts/ratings.ts';

// A small tube-effect supply: 250 V, 100 mA secondary, silicon bridge, 50 Hz.
function supply(overrides: Partial<SupplyInput> = {}, loadAmps = 0.002): SupplyInput {
  return {
    secondary: { rmsVolts: 250, ratedAmps: 0.1 },
    rectifier: { topology: 'bridge', diode: 'silicon' },
    mainsHertz: 50,
    reservoirFarads: 47e-6,
    stages: [
      { droppingOhms: 10e3, farads: 22e-6, loadAmps: 0 },
      { droppingOhms: 22e3, farads: 22e-6, loadAmps: loadAmps },
    ],
    ...overrides,
  };
}

function reservoir(e: ReturnType<typeof estimateSupply>) {
  const r = e.nodes[0];
  if (r === undefined) throw new Error('no reservoir node');
  return r;
}

describe('rectifier DC (common practice, tube amplifier design references "Power supply", confirmed tube design site)', () => {
  it('unloaded B+ is the peak of the unloaded secondary less diode drops (5-10 % rise, default 7 %)', () => {
    const e = estimateSupply(supply());
    expect(e.unloadedVolts).toBeCloseTo(Math.SQRT2 * 250 * 1.07 - 2 * 1.0, 9);
    const ct = estimateSupply(supply({ rectifier: { topology: 'full-wave-ct', diode: 'silicon', dropVolts: 0.7 } }));
    expect(ct.unloadedVolts).toBeCloseTo(Math.SQRT2 * 250 * 1.07 - 0.7, 9); // one diode in the path
    const tube = estimateSupply(supply({ rectifier: { topology: 'full-wave-ct', diode: 'tube', dropVolts: 50 } }));
    expect(tube.unloadedVolts).toBeCloseTo(Math.SQRT2 * 250 * 1.07 - 50, 9);
  });

  it('light load: DC ≈ 1.41 × RMS less diode drops', () => {
    // winding resistance given, regulation 0: the open-circuit RMS is the rated RMS
    const e = estimateSupply(
      supply({ secondary: { rmsVolts: 250, ratedAmps: 0.1, regulationFraction: 0, windingOhms: 50 }, stages: [], reservoirLoadAmps: 0.001 }),
    );
    const expected = 1.41 * 250 - 2 * 1.0;
    expect(Math.abs(reservoir(e).dcVolts - expected) / expected).toBeLessThan(0.01);
  });

  it('DC falls as load rises and is about 1.3 × RMS at full rated winding current (bridge)', () => {
    const at = (amps: number) => estimateSupply(supply({ stages: [], reservoirLoadAmps: amps, reservoirFarads: 100e-6 }));
    let prev = Number.POSITIVE_INFINITY;
    for (const a of [0, 0.005, 0.02, 0.04]) {
      const v = reservoir(at(a)).dcVolts;
      expect(v).toBeLessThan(prev);
      prev = v;
    }
    // find the DC load at which the simulated RMS winding current equals the rating
    let lo = 0.001;
    let hi = 0.2;
    for (let i = 0; i < 14; i++) {
      const mid = 0.5 * (lo + hi);
      if (at(mid).windingRmsAmps > 0.1) hi = mid;
      else lo = mid;
    }
    const full = at(lo); // just under the rating
    const ratio = reservoir(full).dcVolts / 250;
    // "about 1.3 × at full load for a bridge": accept 1.25..1.38
    expect(ratio).toBeGreaterThan(1.25);
    expect(ratio).toBeLessThan(1.38);
    expect(full.warnings.some((w) => /transformer overloaded/.test(w))).toBe(false);
    expect(at(hi * 1.3).warnings.some((w) => /transformer overloaded/.test(w))).toBe(true);
  });
});

describe('reservoir ripple ≈ I/(2·f·C) full-wave, I/(f·C) half-wave (common practice, tube amplifier design references, confirmed)', () => {
  const stiff = { rmsVolts: 250, ratedAmps: 0.5, regulationFraction: 0.02, windingOhms: 2 };
  it('full-wave bridge, 50 and 60 Hz, ripple at twice mains', () => {
    for (const mainsHertz of [50, 60] as const) {
      const e = estimateSupply(supply({ secondary: stiff, mainsHertz, stages: [], reservoirLoadAmps: 0.02, reservoirFarads: 100e-6 }));
      const formula = 0.02 / (2 * mainsHertz * 100e-6);
      expect(e.rippleHertz).toBe(2 * mainsHertz);
      expect(e.formulaRippleVolts).toBeCloseTo(formula, 12);
      // the formula assumes discharge for the whole half-cycle, so it is an upper bound
      expect(reservoir(e).ripplePeakToPeakVolts).toBeLessThanOrEqual(formula);
      expect(reservoir(e).ripplePeakToPeakVolts).toBeGreaterThan(0.85 * formula);
    }
  });
  it('half-wave ripple is about twice the full-wave ripple, at mains frequency', () => {
    const e = estimateSupply(
      supply({ secondary: stiff, rectifier: { topology: 'half-wave', diode: 'silicon' }, stages: [], reservoirLoadAmps: 0.02, reservoirFarads: 100e-6 }),
    );
    const formula = 0.02 / (50 * 100e-6);
    expect(e.rippleHertz).toBe(50);
    expect(reservoir(e).ripplePeakToPeakVolts).toBeLessThanOrEqual(formula);
    expect(reservoir(e).ripplePeakToPeakVolts).toBeGreaterThan(0.85 * formula);
    expect(e.warnings.some((w) => /half-wave/.test(w))).toBe(true);
  });
});

describe('RC filter stages', () => {
  it('each harmonic is attenuated by 1/|1 + jωRC| ≈ 1/(2π·f·R·C) (first-order RC low-pass, handbook formula)', () => {
    const e = estimateSupply(supply());
    const r0 = e.nodes[0];
    const r1 = e.nodes[1];
    if (r0 === undefined || r1 === undefined) throw new Error('nodes missing');
    const h0 = r0.rippleHarmonics[0];
    const h1 = r1.rippleHarmonics[0];
    if (h0 === undefined || h1 === undefined) throw new Error('harmonics missing');
    const approx = 1 / (2 * Math.PI * 100 * 10e3 * 22e-6); // ωRC ≈ 138, so the approximation holds to 0.003 %
    expect(h1.amplitudeVolts / h0.amplitudeVolts / approx).toBeCloseTo(1, 3);
  });

  it('stage ripple matches an independent time-domain RC filter of the reservoir ripple', () => {
    const e = estimateSupply(supply({ stages: [{ droppingOhms: 1e3, farads: 4.7e-6, loadAmps: 0.003 }] }));
    const fs = 192000;
    const x = rippleWaveform(e, 0, fs, 2);
    const tau = 1e3 * 4.7e-6;
    const alpha = 1 - Math.exp(-1 / (fs * tau)); // exact step response of a one-pole RC
    let y = 0;
    let lo = Infinity;
    let hi = -Infinity;
    for (let j = 0; j < x.length; j++) {
      y += alpha * ((x[j] ?? 0) - y);
      if (j > x.length / 2) {
        lo = Math.min(lo, y);
        hi = Math.max(hi, y);
      }
    }
    const node = e.nodes[1];
    if (node === undefined) throw new Error('node missing');
    expect((hi - lo) / node.ripplePeakToPeakVolts).toBeCloseTo(1, 1);
  });

  it('DC drops by I·R per stage; source resistance adds the dropping resistors', () => {
    const e = estimateSupply(supply({}, 0.002));
    const [n0, n1, n2] = e.nodes;
    if (n0 === undefined || n1 === undefined || n2 === undefined) throw new Error('nodes missing');
    expect(n0.dcVolts - n1.dcVolts).toBeCloseTo(0.002 * 10e3, 9); // Ohm's law
    expect(n1.dcVolts - n2.dcVolts).toBeCloseTo(0.002 * 22e3, 9);
    expect(n2.sourceOhms - n0.sourceOhms).toBeCloseTo(32e3, 6);
    expect(n0.sourceOhms).toBeGreaterThan(e.windingOhms); // capacitor-input: more than the winding alone
    // the source resistance predicts the sag for a little more load
    const more = estimateSupply(supply({}, 0.0025));
    const predicted = n2.dcVolts - n2.sourceOhms * 0.0005;
    expect(Math.abs((more.nodes[2]?.dcVolts ?? 0) - predicted)).toBeLessThan(0.01 * n2.dcVolts);
    expect(n2.droppingResistorWatts).toBeCloseTo(0.002 ** 2 * 22e3, 12);
  });
});

describe('hum waveform for the model', () => {
  it('is zero-mean, finite, periodic at the ripple frequency, and matches the node ripple', () => {
    const e = estimateSupply(supply({ stages: [], reservoirLoadAmps: 0.01 }));
    const fs = 48000;
    const w = rippleWaveform(e, 0, fs);
    expect(w.length).toBe(fs);
    let sum = 0;
    let lo = Infinity;
    let hi = -Infinity;
    for (const v of w) {
      expect(Number.isFinite(v)).toBe(true);
      sum += v;
      lo = Math.min(lo, v);
      hi = Math.max(hi, v);
    }
    expect(Math.abs(sum / w.length)).toBeLessThan(1e-9 * (hi - lo) + 1e-12);
    const period = fs / e.rippleHertz; // 480 samples
    expect(w[100 + period]).toBeCloseTo(w[100] ?? NaN, 9);
    // 24 harmonics rebuild the simulated sawtooth-like ripple to within 10 %
    expect((hi - lo) / reservoir(e).ripplePeakToPeakVolts).toBeGreaterThan(0.9);
    expect((hi - lo) / reservoir(e).ripplePeakToPeakVolts).toBeLessThan(1.1);
  });
  it('refuses a bad node index', () => {
    expect(() => rippleWaveform(estimateSupply(supply()), 7, 48000)).toThrow(/nodeIndex/);
  });
});

describe('heater budget (12AX7 6.3 V 0.3 A, EF86 6.3 V 0.2 A: data sheets, RCA/Sylvania 12AX7 and Philips EF86 data sheets confirmed)', () => {
  const ax7 = { volts: 6.3, amps: 0.3, label: '12AX7' };
  const ef86 = { volts: 6.3, amps: 0.2, label: 'EF86' };
  it('passes within the winding rating', () => {
    const e = estimateSupply(supply({ heaters: [ax7, ax7, ef86], heaterWinding: { volts: 6.3, amps: 1 } }));
    expect(e.heater?.totalAmps).toBeCloseTo(0.8, 12);
    expect(e.heater?.pass).toBe(true);
    expect(e.warnings.some((w) => /heater/.test(w))).toBe(false);
  });
  it('fails when overloaded', () => {
    const e = estimateSupply(supply({ heaters: [ax7, ax7, ax7, ax7], heaterWinding: { volts: 6.3, amps: 1 } }));
    expect(e.heater?.pass).toBe(false);
    expect(e.heater?.currentOk).toBe(false);
    expect(e.warnings.some((w) => /heater winding overloaded/.test(w))).toBe(true);
  });
  it('fails a 12.6 V heater (12AX7 series wiring, 0.15 A) on a 6.3 V winding', () => {
    const e = estimateSupply(supply({ heaters: [{ volts: 12.6, amps: 0.15 }], heaterWinding: { volts: 6.3, amps: 1 } }));
    expect(e.heater?.currentOk).toBe(true);
    expect(e.heater?.pass).toBe(false);
  });
});

describe('ratings (lists common practice; 80 % / 50 % derating from memory)', () => {
  it('capacitor voltage with 80 % derating', () => {
    const r = nextCapacitorVoltageRating(300);
    expect(r.ok && r.rating).toBe(400); // 300/0.8 = 375 → 400 V
    const edge = nextCapacitorVoltageRating(320); // exactly 80 % of 400 V
    expect(edge.ok && edge.rating).toBe(400);
    const r2 = nextCapacitorVoltageRating(376);
    expect(r2.ok && r2.rating).toBe(500); // 470 V needed
    expect(nextCapacitorVoltageRating(900).ok).toBe(false);
    const noDerate = nextCapacitorVoltageRating(400, { derate: 1 });
    expect(noDerate.ok && noDerate.rating).toBe(400);
  });
  it('resistor wattage with 50 % derating', () => {
    const r = nextResistorWattage(0.3);
    expect(r.ok && r.rating).toBe(1); // 0.6 W needed
    const r2 = nextResistorWattage(0.0625);
    expect(r2.ok && r2.rating).toBe(0.125);
    expect(nextResistorWattage(6).ok).toBe(false);
    expect(nextResistorWattage(-1).ok).toBe(false);
  });
  it('supply asks for capacitors rated for the unloaded B+ (switch-on, common practice, tube amplifier design references confirmed)', () => {
    const e = estimateSupply(supply({ reservoirRatedVolts: 450 }));
    expect(e.unloadedVolts).toBeGreaterThan(360);
    const need = e.nodes[0]?.capacitorRating;
    expect(need?.ok && need.rating).toBe(500);
    expect(e.warnings.some((w) => /reservoir capacitor rated 450 V/.test(w))).toBe(true);
  });
});

describe('bad input', () => {
  it('throws one-line RangeErrors', () => {
    expect(() => estimateSupply(supply({ reservoirFarads: 0 }))).toThrow(/reservoirFarads/);
    expect(() => estimateSupply(supply({ mainsHertz: 55 as 50 }))).toThrow(/mainsHertz/);
    expect(() => estimateSupply(supply({ secondary: { rmsVolts: -1, ratedAmps: 0.1 } }))).toThrow(/rmsVolts/);
  });
  it('warns when the load collapses the supply', () => {
    const e = estimateSupply(supply({ stages: [], reservoirLoadAmps: 5 }));
    expect(e.warnings.some((w) => /collapses/.test(w))).toBe(true);
    for (const n of e.nodes) expect(Number.isFinite(n.dcVolts)).toBe(true);
  });
});
