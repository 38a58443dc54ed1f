// Checks of the synthesized demo material: pitch measured from rendered audio, pickup load
// resonance against the LC formula, levels against typical DI figures, and the written files.
import { existsSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { wavefileDecode } from './helpers/wavefile.ts';
import { describe, expect, it } from 'vitest';
import { analogMagnitude, biquadMagnitude, runBiquad } from '../src/dsp/synth/biquad.ts';
import { fftInPlace, magnitudeSpectrum, nextPowerOfTwo, peakFrequencyHz } from '../src/dsp/synth/fft.ts';
import {
  type PickupParams,
  SINGLE_COIL_BRIDGE,
  SINGLE_COIL_NECK,
  TWIN_COIL_BRIDGE,
  applyPickupComb,
  pickupAnalog,
  pickupLoadFilter,
  pickupResonanceHz,
} from '../src/dsp/synth/pickup.ts';
import { type Riff, fileCalibration, midiToHz, renderRiff, renderRiffVolts, resolveNotes } from '../src/dsp/synth/riff.ts';
import { BOILER_FIFTHS, DEMO_RIFFS, HARBOUR_LANTERN, LONG_FILAMENT, SLATE_STEPS } from '../src/dsp/synth/riffs.ts';
import { designStringLoop, loopPhaseDelaySamples, pluckExcitation, renderPluckedString } from '../src/dsp/synth/string.ts';
import { PCM24_FULL_SCALE, quantisePcm24 } from '../src/dsp/synth/wav.ts';

const FS = 48000;
const DEMO_DIR = join(import.meta.dirname, '..', 'public', 'demo');

/** Header fields read directly (wavefile accepts malformed files silently, so check them here). */
function readHeader(bytes: Uint8Array): { format: number; channels: number; rate: number; bits: number; dataBytes: number } {
  const v = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const tag = (o: number) => String.fromCharCode(...bytes.subarray(o, o + 4));
  if (tag(0) !== 'RIFF' || tag(8) !== 'WAVE') throw new Error('not a RIFF/WAVE file');
  if (v.getUint32(4, true) !== bytes.length - 8) throw new Error('RIFF size does not match the file');
  let o = 12;
  let fmt: { format: number; channels: number; rate: number; bits: number } | undefined;
  while (o + 8 <= bytes.length) {
    const size = v.getUint32(o + 4, true);
    if (tag(o) === 'fmt ') {
      fmt = { format: v.getUint16(o + 8, true), channels: v.getUint16(o + 10, true), rate: v.getUint32(o + 12, true), bits: v.getUint16(o + 22, true) };
    }
    if (tag(o) === 'data') {
      if (!fmt) throw new Error('data chunk before fmt chunk');
      if (o + 8 + size > bytes.length) throw new Error('data chunk runs past the end of the file');
      return { ...fmt, dataBytes: size };
    }
    o += 8 + size + (size % 2);
  }
  throw new Error('no data chunk');
}

function centsBetween(measuredHz: number, expectedHz: number): number {
  return 1200 * Math.log2(measuredHz / expectedHz);
}

/** f0 from the FFT peak (Hann window, 8x zero padding, parabolic log interpolation) within +-50 cents of nominal. */
function measureF0(x: ArrayLike<number>, startS: number, endS: number, nominalHz: number): number {
  const start = Math.round(startS * FS);
  const length = Math.round((endS - startS) * FS);
  const n = nextPowerOfTwo(length * 8);
  const mag = magnitudeSpectrum(x, n, { start, length, hann: true });
  return peakFrequencyHz(mag, n, FS, nominalHz * 2 ** (-0.5 / 12), nominalHz * 2 ** (0.5 / 12)).frequencyHz;
}

/** Period from the normalised autocorrelation peak near fs/nominal, parabolic interpolation. */
function autocorrelationF0(x: ArrayLike<number>, startS: number, endS: number, nominalHz: number): number {
  const start = Math.round(startS * FS);
  const len = Math.round((endS - startS) * FS);
  const lagNominal = FS / nominalHz;
  const lo = Math.floor(lagNominal * 0.95);
  const hi = Math.ceil(lagNominal * 1.05);
  const r = (lag: number) => {
    let acc = 0;
    for (let i = 0; i < len - hi - 1; i++) acc += (x[start + i] ?? 0) * (x[start + i + lag] ?? 0);
    return acc;
  };
  let best = lo;
  let bestR = -Infinity;
  for (let lag = lo; lag <= hi; lag++) {
    const v = r(lag);
    if (v > bestR) {
      bestR = v;
      best = lag;
    }
  }
  const a = r(best - 1);
  const c = r(best + 1);
  const delta = (0.5 * (a - c)) / (a - 2 * bestR + c);
  return FS / (best + delta);
}

function singleNoteRiff(midiNote: number, extra: Partial<Riff['notes'][number]> = {}, pickup: PickupParams = SINGLE_COIL_BRIDGE): Riff {
  return {
    name: `note-${midiNote}`,
    title: 'test note',
    description: 'test',
    lengthSeconds: 1.2,
    pickup,
    notes: [{ midiNote, startSeconds: 0, durationSeconds: 1.2, velocity: 0.7, ...extra }],
  };
}

function peakAbs(x: ArrayLike<number>, from = 0, to = x.length): number {
  let p = 0;
  for (let i = from; i < to; i++) p = Math.max(p, Math.abs(x[i] ?? 0));
  return p;
}

describe('FFT used for the measurements', () => {
  it('matches the DFT definition X[k] = sum x[n] exp(-j 2 pi k n / N)', () => {
    // Reference: the DFT definition, evaluated directly.
    const n = 64;
    const re = new Float64Array(n);
    const im = new Float64Array(n);
    for (let i = 0; i < n; i++) re[i] = Math.sin(i * 0.37) + 0.3 * Math.cos(i * 1.9) + (i % 5) * 0.1;
    const x = Float64Array.from(re);
    fftInPlace(re, im);
    for (let k = 0; k < n; k++) {
      let dr = 0;
      let di = 0;
      for (let t = 0; t < n; t++) {
        dr += (x[t] as number) * Math.cos((-2 * Math.PI * k * t) / n);
        di += (x[t] as number) * Math.sin((-2 * Math.PI * k * t) / n);
      }
      expect(re[k]).toBeCloseTo(dr, 9);
      expect(im[k]).toBeCloseTo(di, 9);
    }
  });

  it('peak interpolation finds a sine between bins to well under a cent', () => {
    const f = 196.123;
    const x = Float64Array.from({ length: FS }, (_, i) => Math.sin((2 * Math.PI * f * i) / FS));
    expect(Math.abs(centsBetween(measureF0(x, 0.1, 0.9, 196), f))).toBeLessThan(0.05);
  });
});

describe('plucked string pitch (measured from rendered audio)', () => {
  // Expected pitch: twelve-tone equal temperament, A4 = 440 Hz (ISO 16 concert pitch, from memory).
  for (const midi of [40, 45, 52, 59, 64, 71, 76, 83, 88]) {
    it(`MIDI ${midi} renders within 5 cents of ${midiToHz(midi).toFixed(2)} Hz`, () => {
      const x = renderRiff(singleNoteRiff(midi), FS);
      const f = measureF0(x, 0.1, 1.1, midiToHz(midi));
      expect(Math.abs(centsBetween(f, midiToHz(midi)))).toBeLessThan(5);
    });
  }

  it('an independent autocorrelation estimate agrees within 5 cents (A2 and E4)', () => {
    for (const midi of [45, 64]) {
      const x = renderRiff(singleNoteRiff(midi), FS);
      const f = autocorrelationF0(x, 0.1, 1.0, midiToHz(midi));
      expect(Math.abs(centsBetween(f, midiToHz(midi)))).toBeLessThan(5);
    }
  });

  it('frequencyHz notes and odd pluck/hardness settings also land in tune', () => {
    const riff: Riff = {
      ...singleNoteRiff(60),
      notes: [{ frequencyHz: 277.7, startSeconds: 0, durationSeconds: 1.2, velocity: 0.2, pluckPosition: 0.41, pickHardness: 0.05 }],
    };
    const f = measureF0(renderRiff(riff, FS), 0.1, 1.1, 277.7);
    expect(Math.abs(centsBetween(f, 277.7))).toBeLessThan(5);
  });

  it('the measurement can fail: an integer-only loop (plain Karplus-Strong tuning) is audibly out of tune at E6', () => {
    // Karplus & Strong 1983 tune by whole samples only; at 1318.5 Hz (36.4 samples) that is tens of cents.
    const f0 = midiToHz(88);
    const good = designStringLoop(f0, FS, 3, 0.45, 4000);
    const integerOnly = { ...good, allpassCoefficient: 0 }; // allpass reduced to one whole sample of delay
    const ex = pluckExcitation(good.totalDelaySamples, 0.16, 0.6, 0.7, FS, 5);
    const render = (design: typeof good) =>
      renderPluckedString({ design, excitation: ex, releaseSample: FS * 2, releaseSeconds: 0.1, frequencyHz: f0, sampleRateHz: FS }, new Float64Array(FS));
    expect(Math.abs(centsBetween(measureF0(render(good), 0.05, 0.95, f0), f0))).toBeLessThan(1);
    expect(Math.abs(centsBetween(measureF0(render(integerOnly), 0.05, 0.95, f0), f0))).toBeGreaterThan(10);
  });

  it('the designed loop has total phase delay fs/f0 at f0 (Jaffe & Smith tuning condition)', () => {
    for (const f0 of [82.41, 311.1, 1046.5]) {
      const d = designStringLoop(f0, FS, 5, 0.4, 3500);
      expect(loopPhaseDelaySamples(d, f0, FS)).toBeCloseTo(FS / f0, 9);
    }
  });

  it('every note of the single-note line is within 5 cents (measured in each note window)', () => {
    const x = renderRiffVolts(SLATE_STEPS, FS);
    for (const r of resolveNotes(SLATE_STEPS)) {
      const f = measureF0(x, r.note.startSeconds + 0.06, r.releaseSeconds, r.frequencyHz);
      expect(Math.abs(centsBetween(f, r.frequencyHz)), `note at ${r.note.startSeconds.toFixed(2)} s`).toBeLessThan(5);
    }
  });
});

describe('pluck position and pick hardness shape the excitation', () => {
  const harmonicLevel = (ex: Float64Array, k: number) => {
    let a = 0;
    let b = 0;
    for (let n = 0; n < ex.length; n++) {
      a += (ex[n] as number) * Math.cos((2 * Math.PI * k * n) / ex.length);
      b += (ex[n] as number) * Math.sin((2 * Math.PI * k * n) / ex.length);
    }
    return Math.hypot(a, b);
  };

  it('a pluck at 1/5 of the string leaves out the 5th and 10th harmonics (sin(n pi beta)/n, Fourier series of the pluck)', () => {
    // Period 400 samples (120 Hz), hard pick so edges stay sharp, no notch smearing.
    const ex = pluckExcitation(400, 0.2, 1, 1, FS, 3);
    const h4 = harmonicLevel(ex, 4);
    expect(harmonicLevel(ex, 5) / h4).toBeLessThan(0.1);
    expect(harmonicLevel(ex, 10) / h4).toBeLessThan(0.1);
    // Harmonic 1 vs 2: sin(pi/5)/1 : sin(2 pi/5)/2 = 0.588 : 0.476 (same series), noise allows 15 %.
    expect(Math.abs(harmonicLevel(ex, 2) / harmonicLevel(ex, 1) - 0.809)).toBeLessThan(0.12);
  });

  it('a hard pick puts more energy above 2 kHz than a soft one', () => {
    const period = FS / 110;
    const high = (ex: Float64Array) => {
      let e = 0;
      for (let k = Math.ceil(2000 / 110); k < 60; k++) e += harmonicLevel(ex, k) ** 2;
      return e;
    };
    const hard = pluckExcitation(period, 0.16, 1, 0.7, FS, 9);
    const soft = pluckExcitation(period, 0.16, 0, 0.7, FS, 9);
    expect(high(hard) / high(soft)).toBeGreaterThan(10);
  });
});

describe('pickup', () => {
  it('the loaded resonance peak lands at f = 1/(2 pi sqrt(LC)) (handbook LC formula) within 2 %', () => {
    // L and C spanning published pickup measurements (common practice): 1-10 H, 80-200 pF winding + 300-1000 pF cable (confirmed).
    const cases: Array<[number, number, number]> = [
      [1.5, 80e-12, 300e-12],
      [2.6, 110e-12, 600e-12],
      [4.4, 150e-12, 470e-12],
      [8, 200e-12, 1000e-12],
    ];
    for (const [l, cw, cc] of cases) {
      const p: PickupParams = {
        ...SINGLE_COIL_BRIDGE,
        inductanceHenries: l,
        windingCapacitanceFarads: cw,
        cableCapacitanceFarads: cc,
        windingResistanceOhms: 2000 + 1500 * l,
      };
      const ir = new Float64Array(1 << 15);
      ir[0] = 1;
      runBiquad(pickupLoadFilter(p, FS), ir, ir);
      const n = 1 << 17;
      const mag = magnitudeSpectrum(ir, n);
      const formulaHz = 1 / (2 * Math.PI * Math.sqrt(l * (cw + cc)));
      const measured = peakFrequencyHz(mag, n, FS, 500, 20000).frequencyHz;
      expect(Math.abs(measured / formulaHz - 1), `L=${l} H, C=${(cw + cc) * 1e12} pF`).toBeLessThan(0.02);
    }
  });

  it('the preset pickups resonate at 2-5 kHz (pickup and DI level measurements, common practice, guitar signals, confirmed)', () => {
    for (const p of [SINGLE_COIL_BRIDGE, SINGLE_COIL_NECK, TWIN_COIL_BRIDGE]) {
      expect(pickupResonanceHz(p)).toBeGreaterThan(2000);
      expect(pickupResonanceHz(p)).toBeLessThan(5000);
    }
  });

  it('passes DC at the divider ratio Rl/(R + Rl) and matches the analog response at the resonance', () => {
    const p = SINGLE_COIL_BRIDGE;
    const f = pickupLoadFilter(p, FS);
    // Voltage divider (handbook): winding resistance in series with the 1 M load.
    expect(biquadMagnitude(f, 0, FS)).toBeCloseTo(p.loadResistanceOhms / (p.windingResistanceOhms + p.loadResistanceOhms), 9);
    // Bilinear transform with prewarping: exact at the prewarp frequency.
    const f0 = pickupResonanceHz(p);
    expect(biquadMagnitude(f, f0, FS)).toBeCloseTo(analogMagnitude(pickupAnalog(p), f0), 9);
  });

  it('the sensing-point comb has |1 - exp(-j w D)| = 2|sin(w D / 2)| (handbook comb response)', () => {
    const d = 36;
    const ir = new Float64Array(4096);
    ir[0] = 1;
    const y = applyPickupComb(ir, d, new Float64Array(4096));
    const mag = magnitudeSpectrum(y, 4096);
    for (const k of [10, 57, 113, 400, 1000]) {
      const w = (2 * Math.PI * k) / 4096;
      expect(mag[k]).toBeCloseTo(2 * Math.abs(Math.sin((w * d) / 2)), 9);
    }
  });

  it('rejects bad pickup values with a one-line message', () => {
    expect(() => pickupLoadFilter({ ...SINGLE_COIL_BRIDGE, inductanceHenries: -1 }, FS)).toThrow(/inductance/);
    expect(() => pickupLoadFilter({ ...SINGLE_COIL_BRIDGE, cableCapacitanceFarads: 600 }, FS)).toThrow(/pF/);
  });
});

describe('levels (pickup and DI level measurements, common practice, guitar signals)', () => {
  it('single notes peak at roughly 10-30 mV from soft to hard picking (confirmed source)', () => {
    const soft = peakAbs(renderRiff(singleNoteRiff(52, { velocity: 0 }), FS));
    const hard = peakAbs(renderRiff(singleNoteRiff(52, { velocity: 1 }), FS));
    expect(soft).toBeGreaterThan(0.009);
    expect(hard).toBeLessThan(0.031);
    expect(hard / soft).toBeGreaterThan(2);
  });

  it('single-note clips stay within roughly 10-30 mV; chord clips reach tens to a few hundred mV', () => {
    // "Roughly": 10 % margin. Chords: above one string's hard peak, below 1 V (hot twin-coil chords, from memory).
    for (const riff of [SLATE_STEPS, LONG_FILAMENT]) {
      const p = peakAbs(renderRiff(riff, FS));
      expect(p, riff.name).toBeGreaterThan(0.009);
      expect(p, riff.name).toBeLessThan(0.033);
    }
    for (const riff of [BOILER_FIFTHS, HARBOUR_LANTERN]) {
      const p = peakAbs(renderRiff(riff, FS));
      expect(p, riff.name).toBeGreaterThan(0.03);
      expect(p, riff.name).toBeLessThan(1);
    }
  });

  it('renders finite values only and rejects bad notes with a clear message', () => {
    for (const riff of DEMO_RIFFS) expect(renderRiff(riff, FS).every((v) => Number.isFinite(v))).toBe(true);
    const bad: Riff = { ...SLATE_STEPS, notes: [{ midiNote: 50, startSeconds: 0, durationSeconds: 1, velocity: 2 }] };
    expect(() => renderRiff(bad, FS)).toThrow(/velocity must be from 0 to 1/);
    const low: Riff = { ...SLATE_STEPS, notes: [{ midiNote: 30, startSeconds: 0, durationSeconds: 1, velocity: 0.5 }] };
    expect(() => renderRiff(low, FS)).toThrow(/below the lowest open string/);
  });
});

describe('demo clip files (public/demo, written by scripts/make-demo-clips.ts)', () => {
  interface ClipEntry {
    name: string;
    file: string;
    description: string;
    voltsAtFullScale: number;
    peakDbfs: number;
  }
  const indexPath = join(DEMO_DIR, 'clips.json');

  it('clips.json lists every demo riff and the files exist, under 3 MB in total', () => {
    const index = JSON.parse(readFileSync(indexPath, 'utf8')) as { sampleRateHz: number; clips: ClipEntry[] };
    expect(index.sampleRateHz).toBe(FS);
    expect(index.clips.map((c) => c.name)).toEqual(DEMO_RIFFS.map((r) => r.name));
    let total = 0;
    for (const c of index.clips) {
      expect(existsSync(join(DEMO_DIR, c.file))).toBe(true);
      total += statSync(join(DEMO_DIR, c.file)).size;
    }
    expect(total).toBeLessThan(3_000_000);
  });

  for (const riff of DEMO_RIFFS) {
    it(`${riff.name}.wav is 48 kHz mono 24-bit PCM, peaks at -12 dBFS and equals the model within 1 LSB`, () => {
      const bytes = new Uint8Array(readFileSync(join(DEMO_DIR, `${riff.name}.wav`)));
      const h = readHeader(bytes);
      expect(h).toMatchObject({ format: 1, channels: 1, rate: FS, bits: 24, dataBytes: Math.round(riff.lengthSeconds * FS) * 3 });
      // Decoded by wavefile (npm, general-purpose) rather than by our own writer's code.
      const codes = wavefileDecode(bytes, Int32Array).samples;
      const index = JSON.parse(readFileSync(indexPath, 'utf8')) as { clips: ClipEntry[] };
      const entry = index.clips.find((c) => c.name === riff.name);
      if (!entry) throw new Error(`clips.json has no entry for ${riff.name}`);
      const peakDbfs = 20 * Math.log10(peakAbs(codes) / PCM24_FULL_SCALE);
      expect(Math.abs(peakDbfs - -12)).toBeLessThan(0.05);
      expect(Math.abs(entry.peakDbfs - peakDbfs)).toBeLessThan(0.01);
      const volts = renderRiffVolts(riff, FS);
      const { voltsAtFullScale } = fileCalibration(volts);
      expect(entry.voltsAtFullScale / voltsAtFullScale).toBeCloseTo(1, 5);
      const expected = quantisePcm24(volts, 1 / voltsAtFullScale);
      let worst = 0;
      for (let i = 0; i < expected.length; i++) worst = Math.max(worst, Math.abs((codes[i] ?? 0) - (expected[i] as number)));
      expect(worst).toBeLessThanOrEqual(1);
    });
  }

  it('the sustained clip read back from file is within 5 cents, and its volts calibration gives a single-note level', () => {
    const bytes = new Uint8Array(readFileSync(join(DEMO_DIR, `${LONG_FILAMENT.name}.wav`)));
    const codes = wavefileDecode(bytes, Int32Array).samples;
    const index = JSON.parse(readFileSync(indexPath, 'utf8')) as { clips: ClipEntry[] };
    const vfs = index.clips.find((c) => c.name === LONG_FILAMENT.name)?.voltsAtFullScale ?? Number.NaN;
    const volts = Float64Array.from(codes, (c) => (c / PCM24_FULL_SCALE) * vfs);
    const f0 = midiToHz(62);
    expect(Math.abs(centsBetween(measureF0(volts, 0.3, 4.3, f0), f0))).toBeLessThan(5);
    expect(peakAbs(volts)).toBeGreaterThan(0.009);
    expect(peakAbs(volts)).toBeLessThan(0.033);
  });
});
