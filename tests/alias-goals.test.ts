// The alias goals as tests, on a circuit that is not one of the templates (the EF86 into
// 12AX7 netlist fixture, which has no interelectrode capacitances), through OversampledCircuit,
// the path `valvewright render --oversample N` takes: aliases at least 50 dB below the output at
// the live default factor and at least 70 dB below at the best factor, for sines near 1 kHz and
// 2.5 kHz at 48 kHz driven hard (1 V peak). bench/alias.bench.ts and bench/render-alias.bench.ts
// print the full tables.
//
// The measurement itself is checked first against Parseval's theorem (the power of a sum of
// sines is the sum of their powers, each A^2/2): a signal of harmonics plus one non-harmonic
// tone of known level must read as that level.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parseNetlist } from '../src/dsp/circuit/netlist.ts';
import { BEST_OVERSAMPLING_FACTOR, OversampledCircuit } from '../src/dsp/render/oversampled.ts';
import { DEFAULT_LIVE_FACTOR } from '../src/dsp/realtime/dual-slot-engine.ts';
import { aliasFreeTestFrequency, measureAliasing } from '../src/dsp/analysis/aliasing.ts';

const fs = 48000,
  n = 16384;

describe('measureAliasing against Parseval', () => {
  it.each([-40, -60, -80])('harmonics plus a non-harmonic tone at %d dB read as that level within 0.5 dB', (db) => {
    const f0 = aliasFreeTestFrequency(1000, fs, n);
    const amps = [1, 0.5, 0.3, 0.2, 0.1]; // harmonics 1-5
    const harmonicPower = amps.reduce((s, a) => s + (a * a) / 2, 0);
    // the stray tone: a bin-exact frequency between harmonics 3 and 4
    const stray = Math.round((3.5 * f0) / (fs / n)) * (fs / n);
    const strayAmp = Math.sqrt(2 * harmonicPower * 10 ** (db / 10));
    const x = new Float64Array(n);
    for (let k = 0; k < n; k++) {
      let v = strayAmp * Math.sin((2 * Math.PI * stray * k) / fs);
      amps.forEach((a, h) => {
        v += a * Math.sin((2 * Math.PI * (h + 1) * f0 * k) / fs + h);
      });
      x[k] = v;
    }
    // expected: stray power against the total (harmonics + stray)
    const expected = 10 * Math.log10((strayAmp * strayAmp) / 2 / (harmonicPower + (strayAmp * strayAmp) / 2));
    expect(Math.abs(measureAliasing(x, fs, f0).aliasDb - expected)).toBeLessThan(0.5);
  });
});

describe('alias goals on the EF86 into 12AX7 netlist, 1 V peak', () => {
  const netlist = parseNetlist(readFileSync(new URL('./fixtures/netlists/ef86-12ax7-direct-coupled.json', import.meta.url), 'utf8'));
  const aliasDb = (factor: typeof DEFAULT_LIVE_FACTOR, target: number): number => {
    const f0 = aliasFreeTestFrequency(target, fs, n);
    const m = new OversampledCircuit(netlist, fs, factor);
    const settle = 4800,
      y = new Float64Array(n);
    for (let k = 0; k < settle + n; k++) {
      const o = m.processSample(Math.sin((2 * Math.PI * f0 * k) / fs));
      if (k >= settle) y[k - settle] = o;
    }
    return measureAliasing(y, fs, f0).aliasDb;
  };
  it.each([1000, 2500])(
    `live default (${DEFAULT_LIVE_FACTOR}x), near %d Hz: at least 50 dB down`,
    (target) => {
      expect(aliasDb(DEFAULT_LIVE_FACTOR, target)).toBeLessThan(-50);
    },
    60000,
  );
  it.each([1000, 2500])(
    `best quality (${BEST_OVERSAMPLING_FACTOR}x), near %d Hz: at least 70 dB down`,
    (target) => {
      expect(aliasDb(BEST_OVERSAMPLING_FACTOR, target)).toBeLessThan(-70);
    },
    120000,
  );
});
