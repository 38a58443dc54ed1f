// Checks of the cabinet impulse responses: the committed files decode and equal the model,
// and their measured spectra show the modelled resonance, roll-off, open-back and mic effects.
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { wavefileDecode } from './helpers/wavefile.ts';
import { describe, expect, it } from 'vitest';
import { analogHighpass2, analogLowpass2, bilinear, biquadMagnitude, butterworthQs } from '../src/dsp/synth/biquad.ts';
import {
  CABINET_VARIANTS,
  type CabinetParams,
  SPEED_OF_SOUND_METRES_PER_SECOND,
  cabinetImpulse,
  cabinetPaths,
  cabinetResponse,
  highpassPeakHz,
} from '../src/dsp/synth/cabinet.ts';
import { magnitudeSpectrum, peakFrequencyHz } from '../src/dsp/synth/fft.ts';

const FS = 48000;
const N_FFT = 1 << 16;
const IMPULSE_DIR = join(import.meta.dirname, '..', 'impulses');

function variant(name: string): CabinetParams {
  const v = CABINET_VARIANTS.find((c) => c.name === name);
  if (!v) throw new Error(`no cabinet variant ${name}`);
  return v;
}

/** Raw (unnormalised) model IR spectrum in dB, from the FFT of the rendered impulse response. */
function measuredDb(p: CabinetParams): (hz: number) => number {
  const { samples, normalisationGain } = cabinetImpulse(p, FS);
  const mag = magnitudeSpectrum(samples, N_FFT);
  return (hz: number) => {
    const x = (hz * N_FFT) / FS;
    const k = Math.floor(x);
    const t = x - k;
    const m = (1 - t) * (mag[k] as number) + t * (mag[k + 1] as number);
    return 20 * Math.log10(m / normalisationGain);
  };
}

function modelDb(p: CabinetParams, hz: number): number {
  const r = cabinetResponse(p, FS, hz);
  return 20 * Math.log10(Math.hypot(r.re, r.im));
}

function meanDb(f: (hz: number) => number, loHz: number, hiHz: number): number {
  let acc = 0;
  let n = 0;
  for (let hz = loHz; hz <= hiHz; hz *= 1.02) {
    acc += f(hz);
    n++;
  }
  return acc / n;
}

function readWavFloat(bytes: Uint8Array): { rate: number; channels: number; format: number; bits: number } {
  const v = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const tag = (o: number) => String.fromCharCode(...bytes.subarray(o, o + 4));
  if (tag(0) !== 'RIFF' || tag(8) !== 'WAVE' || tag(12) !== 'fmt ') throw new Error('not a RIFF/WAVE file with fmt first');
  if (v.getUint32(4, true) !== bytes.length - 8) throw new Error('RIFF size does not match the file');
  return { format: v.getUint16(20, true), channels: v.getUint16(22, true), rate: v.getUint32(24, true), bits: v.getUint16(34, true) };
}

describe('committed impulse files (impulses/*.wav, written by impulses/make-impulses.ts)', () => {
  for (const p of CABINET_VARIANTS) {
    it(`${p.name}.wav decodes as 48 kHz mono 32-bit float, unit energy, equal to the model`, () => {
      const file = join(IMPULSE_DIR, `${p.name}.wav`);
      expect(existsSync(file)).toBe(true);
      const bytes = new Uint8Array(readFileSync(file));
      expect(readWavFloat(bytes)).toEqual({ format: 3, channels: 1, rate: FS, bits: 32 });
      // Decoded by wavefile (npm, general-purpose), not by our writer.
      const decoded = wavefileDecode(bytes, Float64Array).samples;
      const model = cabinetImpulse(p, FS).samples;
      expect(decoded.length).toBe(model.length);
      expect(model.length / FS).toBeGreaterThanOrEqual(0.1);
      expect(model.length / FS).toBeLessThanOrEqual(0.2);
      let energy = 0;
      let worst = 0;
      for (let i = 0; i < model.length; i++) {
        const d = decoded[i] ?? Number.NaN;
        energy += d * d;
        worst = Math.max(worst, Math.abs(d - (model[i] as number)));
      }
      expect(Math.abs(energy - 1)).toBeLessThan(1e-5);
      expect(worst).toBeLessThan(1e-7); // float32 rounding of values below 1
    });
  }
});

describe('cabinet model: measured spectra', () => {
  for (const p of CABINET_VARIANTS) {
    it(`${p.name}: FFT of the impulse response matches the model's frequency response within 0.3 dB (40 Hz-16 kHz)`, () => {
      const m = measuredDb(p);
      let top = -Infinity;
      for (let hz = 40; hz <= 16000; hz *= 1.01) top = Math.max(top, modelDb(p, hz));
      for (let hz = 40; hz <= 16000; hz *= 1.01) {
        const want = modelDb(p, hz);
        if (want < top - 50) continue; // deep notches and far stopband: truncation noise dominates
        expect(Math.abs(m(hz) - want), `${hz.toFixed(0)} Hz`).toBeLessThan(0.3);
      }
    });
  }

  for (const p of CABINET_VARIANTS.filter((c) => c.back === 'closed')) {
    it(`${p.name}: the low-frequency peak sits at fc/sqrt(1 - 1/(2Q^2)) (second-order high-pass, handbook) within 5 %`, () => {
      const { samples } = cabinetImpulse(p, FS);
      const mag = magnitudeSpectrum(samples, N_FFT);
      const measured = peakFrequencyHz(mag, N_FFT, FS, 40, 300).frequencyHz;
      const formula = highpassPeakHz(p.coneResonanceHz, p.coneResonanceQ);
      expect(formula).toBeGreaterThan(70);
      expect(formula).toBeLessThan(120);
      expect(Math.abs(measured / formula - 1)).toBeLessThan(0.05);
    });

    it(`${p.name}: below resonance the closed box falls at 12 dB/octave (second-order asymptote) within 1.5 dB`, () => {
      const m = measuredDb(p);
      const f = p.coneResonanceHz / 4;
      expect(m(f) - m(f / 2)).toBeGreaterThan(10.5);
      expect(m(f) - m(f / 2)).toBeLessThan(13.5);
    });
  }

  for (const p of CABINET_VARIANTS) {
    it(`${p.name}: above ${p.upperRolloffHz} Hz the response falls at least ${6 * p.upperRolloffOrder} dB per octave`, () => {
      // Butterworth order n: asymptotic slope 6n dB/octave (handbook). Bilinear warping and the mic low-pass only steepen it.
      const m = measuredDb(p);
      const fc = p.upperRolloffHz;
      expect(m(1.25 * fc) - m(2.5 * fc)).toBeGreaterThan(6 * p.upperRolloffOrder * 0.8);
      expect(meanDb(m, 300, 1500) - m(2 * fc)).toBeGreaterThan(6 * p.upperRolloffOrder - 3);
    });
  }
});

describe('cabinet model: parts against handbook formulas', () => {
  it('Butterworth sections give |H| = 1/sqrt(1 + (W/Wc)^(2n)) at the bilinear-warped frequency', () => {
    // Butterworth magnitude (handbook) with W = tan(pi f / fs), the bilinear frequency map (prewarped at fc).
    for (const order of [4, 6]) {
      const fc = 5200;
      const sections = butterworthQs(order).map((q) => bilinear(analogLowpass2(fc, q), FS, fc));
      for (const f of [500, 2600, 5200, 7000, 10400, 15000]) {
        const digital = sections.reduce((acc, s) => acc * biquadMagnitude(s, f, FS), 1);
        const ratio = Math.tan((Math.PI * f) / FS) / Math.tan((Math.PI * fc) / FS);
        const formula = 1 / Math.sqrt(1 + ratio ** (2 * order));
        expect(20 * Math.log10(digital)).toBeCloseTo(20 * Math.log10(formula), 6);
      }
    }
  });

  it('the closed-box section alone peaks at the handbook frequency within 0.5 %', () => {
    const hp = bilinear(analogHighpass2(92, 1.5), FS, 92);
    let best = 0;
    let bestHz = 0;
    for (let hz = 50; hz < 300; hz += 0.05) {
      const m = biquadMagnitude(hp, hz, FS);
      if (m > best) {
        best = m;
        bestHz = hz;
      }
    }
    expect(Math.abs(bestHz / highpassPeakHz(92, 1.5) - 1)).toBeLessThan(0.005);
    // Peak height Q / sqrt(1 - 1/(4 Q^2)) (same second-order formula set).
    expect(best).toBeCloseTo(1.5 / Math.sqrt(1 - 1 / 9), 3);
  });

  it('open back: the measured low-end loss equals the rear-wave cancellation |1 - g e^{-jwD} H_lp| (dipole-like high-pass)', () => {
    const open = variant('open-12-cap-far');
    const closed: CabinetParams = { ...open, back: 'closed' };
    const mo = measuredDb(open);
    const mc = measuredDb(closed);
    const paths = cabinetPaths(open, FS);
    for (const hz of [40, 60, 100]) {
      const w = 2 * Math.PI * hz;
      const lp = 1 / Math.hypot(1, hz / open.rearLowpassHz); // first-order low-pass magnitude (analog; warping negligible here)
      const phase = -w * (paths.rearDelaySamples / FS) - Math.atan(hz / open.rearLowpassHz);
      const cancel = Math.hypot(1 - open.rearGain * lp * Math.cos(phase), open.rearGain * lp * Math.sin(phase));
      expect(mo(hz) - mc(hz)).toBeCloseTo(20 * Math.log10(cancel), 1);
    }
    // Toward DC the cancellation tends to 1 - g (-14 dB for g = 0.8); at 40 Hz it is already past -8 dB.
    expect(mo(40) - mc(40)).toBeLessThan(-8);
  });

  it('each open-back variant has at least 4 dB less low end (60-90 Hz re 300-3000 Hz) than the same speaker closed', () => {
    const lowVsMid = (p: CabinetParams) => {
      const m = measuredDb(p);
      return meanDb(m, 60, 90) - meanDb(m, 300, 3000);
    };
    for (const p of CABINET_VARIANTS.filter((c) => c.back === 'open')) {
      expect(lowVsMid({ ...p, back: 'closed' }) - lowVsMid(p), p.name).toBeGreaterThan(4);
    }
  });

  it('the edge mic is darker than the centre mic on the same speaker (5 kHz re 1 kHz), by its low-pass', () => {
    const centre = measuredDb(variant('sealed-12-cap-close'));
    const edge = measuredDb(variant('sealed-12-rim-close'));
    const tilt = (m: (hz: number) => number) => m(5000) - m(1000);
    const lpc = bilinear(analogLowpass2(12000, Math.SQRT1_2), FS, 12000);
    const lpe = bilinear(analogLowpass2(3200, Math.SQRT1_2), FS, 3200);
    const lpTilt = (s: typeof lpc) => 20 * Math.log10(biquadMagnitude(s, 5000, FS) / biquadMagnitude(s, 1000, FS));
    expect(tilt(centre) - tilt(edge)).toBeGreaterThan(6);
    expect(tilt(centre) - tilt(edge)).toBeCloseTo(lpTilt(lpc) - lpTilt(lpe), 1);
    // A second-order Q = 0.707 low-pass is 3.01 dB down at its corner (Butterworth, handbook).
    expect(20 * Math.log10(biquadMagnitude(lpe, 3200, FS))).toBeCloseTo(-3.01, 2);
  });

  it('the far mic shows the floor-bounce comb: first notch at c / (2 (r_reflected - r_direct)) (image source)', () => {
    const far = variant('open-12-cap-far');
    const dry: CabinetParams = { ...far, floorReflectionCoefficient: 0 };
    const mf = measuredDb(far);
    const md = measuredDb(dry);
    const extraPath = Math.hypot(far.micDistanceMetres, 2 * far.heightMetres) - far.micDistanceMetres;
    const notchHz = SPEED_OF_SOUND_METRES_PER_SECOND / (2 * extraPath);
    let worst = Infinity;
    let worstHz = 0;
    for (let hz = notchHz * 0.7; hz < notchHz * 1.3; hz += 1) {
      const d = mf(hz) - md(hz);
      if (d < worst) {
        worst = d;
        worstHz = hz;
      }
    }
    // Delay rounded to whole samples: allow 3 %. Depth 20 log10(1 - r d/r_reflected).
    expect(Math.abs(worstHz / notchHz - 1)).toBeLessThan(0.03);
    const r = far.floorReflectionCoefficient * (far.micDistanceMetres / (far.micDistanceMetres + extraPath));
    expect(worst).toBeCloseTo(20 * Math.log10(1 - r), 0);
  });

  it('rejects a bad cabinet description with a one-line message', () => {
    const p = variant('sealed-12-cap-close');
    expect(() => cabinetImpulse({ ...p, upperRolloffOrder: 5 }, FS)).toThrow(/even integer/);
    expect(() => cabinetImpulse({ ...p, coneResonanceHz: 0 }, FS)).toThrow(/cone resonance/);
  });
});
