// Oversampler: half-band stages and cascades, measured by injecting sines.
//
// Instrument (test-only): amplitude and phase by projection onto e^{-j2πkn/N} under a periodic
// Hann window. All test tones sit on bin centres of the analysis record, so any other tone
// two or more bins away leaks nothing into the estimate (the periodic Hann window's DFT is
// nonzero only at bins 0 and ±1; Harris, "On the use of windows for harmonic analysis with
// the DFT", Proc. IEEE 66(1), 1978, from memory) — estimates are exact to rounding.
import { describe, expect, it } from 'vitest';
import {
  Oversampler,
  designStages,
  makeStage,
  PASSBAND_EDGE_OF_BASE_RATE,
  STAGE_ATTENUATION_DB,
  stageTransitionWidth,
  type HalfbandDesign,
  type OversamplingFactor,
  type OversamplingQuality,
} from '../src/dsp/oversampling/index.ts';

interface Phasor {
  readonly amplitude: number;
  readonly phaseRadians: number;
}

/** Amplitude/phase of the bin-k component of y[start … start+N-1] (phase relative to n = 0). */
function project(y: Float64Array, start: number, length: number, bin: number): Phasor {
  let re = 0;
  let im = 0;
  let wSum = 0;
  for (let n = 0; n < length; n++) {
    const w = 0.5 - 0.5 * Math.cos((2 * Math.PI * n) / length);
    const v = (y[start + n] as number) * w;
    const arg = (2 * Math.PI * bin * (start + n)) / length;
    re += v * Math.cos(arg);
    im -= v * Math.sin(arg);
    wSum += w;
  }
  return { amplitude: (2 * Math.hypot(re, im)) / wSum, phaseRadians: Math.atan2(im, re) };
}

const dB = (x: number): number => 20 * Math.log10(x);
const QUALITIES: readonly OversamplingQuality[] = ['live', 'offline'];
const FACTORS: readonly OversamplingFactor[] = [2, 4, 8, 16, 32, 64, 128];
const SKIP = 1024; // base samples dropped before analysis (longest transient: 32x FIR, ~50)
const N = 2048; // analysis record, base samples

// ---------------------------------------------------------------- single 2x stages

/** Decimate a high-rate cosine at (alias bin k, side) and return the amplitude at bin k. */
function stageDownLeak(design: HalfbandDesign, fHighCyclesPerSample: number, aliasBin: number, length: number): number {
  const stage = makeStage(design);
  stage.reset(0);
  const out = new Float64Array(SKIP + length);
  for (let n = 0; n < out.length; n++) {
    out[n] = stage.downsample(Math.cos(2 * Math.PI * fHighCyclesPerSample * 2 * n), Math.cos(2 * Math.PI * fHighCyclesPerSample * (2 * n + 1)));
  }
  return project(out, SKIP, length, aliasBin).amplitude;
}

/** Interpolate a low-rate cosine at bin k; return amplitudes of the tone and its image. */
function stageUp(design: HalfbandDesign, bin: number, length: number): { pass: number; image: number } {
  const stage = makeStage(design);
  stage.reset(0);
  const out = new Float64Array(2 * (SKIP + length));
  for (let n = 0; n < SKIP + length; n++) stage.upsample(Math.cos((2 * Math.PI * bin * n) / length), out, 2 * n);
  // High-rate record of 2·length samples: the tone is at bin k, its image at length - k.
  return { pass: project(out, 2 * SKIP, 2 * length, bin).amplitude, image: project(out, 2 * SKIP, 2 * length, length - bin).amplitude };
}

describe('single 2x half-band stages', () => {
  for (const quality of QUALITIES) {
    const designs = designStages(32, quality);
    designs.forEach((design, s) => {
      const t = stageTransitionWidth(s);
      const L = 4096;
      // Stopband [¼ + t/2, ½] at the high rate aliases onto [0, ½ - t] at the low rate.
      const lastBin = Math.round((0.5 - t) * L);

      it(`${quality} stage ${s} (t = ${t.toFixed(4)}): decimation stopband matches the design formula`, () => {
        let worst = 0;
        const step = Math.max(1, Math.floor(lastBin / 500));
        const bins: number[] = [];
        for (let k = 1; k < lastBin; k += step) bins.push(k);
        bins.push(lastBin); // the stopband edge itself
        // High-rate frequency (1 - k/L)/2 folds onto low-rate bin k.
        for (const k of bins) worst = Math.max(worst, stageDownLeak(design, (1 - k / L) / 2, k, L));
        const measuredDb = -dB(worst);
        if (design.kind === 'iir') {
          // Elliptic half-band: equiripple stopband at exactly the level given by the
          // order/nome relation δ²/(1-δ²) = 4·q^(n/2) (Valenzuela & Constantinides 1983, from memory).
          expect(measuredDb).toBeGreaterThan(design.predictedAttenuationDb - 0.05);
          expect(measuredDb).toBeLessThan(design.predictedAttenuationDb + 0.5);
        } else {
          // Kaiser window: at least the attenuation asked for, with at least the length
          // Kaiser's formula N-1 = (A-7.95)/(14.36·Δf) gives (Oppenheim & Schafer §7.5.3, from memory).
          expect(design.taps.length).toBeGreaterThanOrEqual(Math.floor(design.kaiserLengthEstimate));
          expect(Math.abs(measuredDb - design.predictedAttenuationDb)).toBeLessThan(0.5);
        }
        expect(measuredDb).toBeGreaterThanOrEqual(STAGE_ATTENUATION_DB[quality] - 0.05);
      });

      it(`${quality} stage ${s}: interpolation images and the half-band complementarity`, () => {
        let worstImage = 0;
        for (let k = 8; k < L / 2; k += 40) {
          const { pass, image } = stageUp(design, k, L);
          if (k <= lastBin) worstImage = Math.max(worstImage, image);
          if (design.kind === 'iir') {
            // Two-path allpass half-band is power complementary: |H(f)|² + |H(½-f)|² = 1
            // (Vaidyanathan, Multirate Systems and Filter Banks, 1993, ch. 5, from memory).
            expect(Math.abs(pass * pass + image * image - 1)).toBeLessThan(1e-12);
          } else {
            // Zero-phase FIR half-band: H(f) + H(½-f) = 1 (same book, §4.6, from memory).
            expect(Math.abs(Math.abs(1 - pass) - image)).toBeLessThan(1e-12);
          }
        }
        expect(-dB(worstImage)).toBeGreaterThan(design.predictedAttenuationDb - 0.05);
      });
    });
  }
});

// ---------------------------------------------------------------- cascades

/** Base-rate alias bins to probe in (0, fp]: evenly spread, always including the edge fp. */
function passbandBins(count: number): number[] {
  const edge = Math.round(PASSBAND_EDGE_OF_BASE_RATE * N);
  const bins: number[] = [];
  for (let i = 1; i <= count; i++) bins.push(Math.max(2, Math.round((edge * i) / count)));
  return bins;
}

function minStageAttenuationDb(os: Oversampler): number {
  return Math.min(...os.stageDesigns.map((d) => d.predictedAttenuationDb));
}

describe('cascades', () => {
  for (const quality of QUALITIES) {
    for (const factor of FACTORS) {
      it(`${quality} ${factor}x: aliases folding into 0…fp on downsampling`, () => {
        // Every tone at j ± fa base-rate units (j = 1 … F/2) folds onto fa. In a multistage
        // decimator each alias band falls in some stage's stopband (Crochiere & Rabiner,
        // Multirate Digital Signal Processing, 1983, ch. 5, from memory), so the cascade
        // rejects at least as well as its weakest stage.
        const os = new Oversampler(factor, { quality });
        const block = new Float64Array(factor);
        const out = new Float64Array(SKIP + N);
        let worst = 0;
        for (let j = 1; j <= factor / 2; j++) {
          for (const k of passbandBins(factor >= 16 ? 6 : 12)) {
            for (const side of [-1, 1]) {
              const g = j + (side * k) / N; // cycles per base sample
              if (g > factor / 2) continue;
              os.reset(0);
              for (let n = 0; n < out.length; n++) {
                for (let m = 0; m < factor; m++) block[m] = Math.cos((2 * Math.PI * g * (n * factor + m)) / factor);
                out[n] = os.downsample(block);
              }
              worst = Math.max(worst, project(out, SKIP, N, k).amplitude);
            }
          }
        }
        const measuredDb = -dB(worst);
        expect(measuredDb).toBeGreaterThan(minStageAttenuationDb(os) - 0.1);
        // Brief's filter targets: ≥ 70 dB live, ≥ 100 dB best quality.
        expect(measuredDb).toBeGreaterThan(quality === 'live' ? 70 : 100);
      });

      it(`${quality} ${factor}x: images on upsampling`, () => {
        const os = new Oversampler(factor, { quality });
        const hi = new Float64Array((SKIP + N) * factor);
        const buf = new Float64Array(factor);
        let worst = 0;
        for (const k of passbandBins(factor >= 16 ? 4 : 8)) {
          os.reset(0);
          for (let n = 0; n < SKIP + N; n++) {
            os.upsample(Math.cos((2 * Math.PI * k * n) / N), buf);
            hi.set(buf, n * factor);
          }
          // Images at j·N ± k bins of the high-rate record (F·N samples).
          for (let j = 1; j <= factor / 2; j++) {
            for (const bin of [j * N - k, j * N + k]) {
              if (bin >= (factor * N) / 2) continue;
              worst = Math.max(worst, project(hi, SKIP * factor, N * factor, bin).amplitude);
            }
          }
        }
        const measuredDb = -dB(worst);
        expect(measuredDb).toBeGreaterThan(minStageAttenuationDb(os) - 0.1);
        expect(measuredDb).toBeGreaterThan(quality === 'live' ? 70 : 100);
      });

      it(`${quality} ${factor}x: round-trip passband flat to fp (18 kHz at 48 kHz)`, () => {
        const os = new Oversampler(factor, { quality });
        const buf = new Float64Array(factor);
        const out = new Float64Array(SKIP + N);
        let maxDb = -Infinity;
        let minDb = Infinity;
        for (const k of passbandBins(24)) {
          os.reset(0);
          for (let n = 0; n < out.length; n++) {
            os.upsample(Math.cos((2 * Math.PI * k * n) / N), buf);
            out[n] = os.downsample(buf);
          }
          const a = dB(project(out, SKIP, N, k).amplitude);
          maxDb = Math.max(maxDb, a);
          minDb = Math.min(minDb, a);
        }
        // Expected deviation from 0 dB: an IIR half-band stays within -10·log10(1-δ²) below
        // (power complementarity), an FIR half-band within ±δ (passband ripple equals the
        // stopband ripple δ for a half-band, Vaidyanathan §4.6, from memory). Two filters per
        // stage; deviations add in dB.
        let boundDb = 0;
        for (const d of os.stageDesigns) {
          const delta = 10 ** (-d.predictedAttenuationDb / 20);
          boundDb += 2 * (d.kind === 'iir' ? -10 * Math.log10(1 - delta * delta) : -20 * Math.log10(1 - delta));
        }
        expect(maxDb).toBeLessThanOrEqual(boundDb + 1e-9);
        expect(minDb).toBeGreaterThanOrEqual(-boundDb - 1e-9);
      });
    }
  }
});

// ---------------------------------------------------------------- latency, DC, reset

function roundTrip(os: Oversampler, input: (n: number) => number, length: number): Float64Array {
  const buf = new Float64Array(os.factor);
  const out = new Float64Array(length);
  for (let n = 0; n < length; n++) {
    os.upsample(input(n), buf);
    out[n] = os.downsample(buf);
  }
  return out;
}

/** Phase delay (samples) of a bin-k tone through up+down, from its phase shift. */
function measuredDelay(os: Oversampler, bin: number, length: number): number {
  os.reset(0);
  const out = roundTrip(os, (n) => Math.cos((2 * Math.PI * bin * n) / length), 2 * length);
  const phase = project(out, length, length, bin).phaseRadians; // input phase is 0
  let delay = -phase / ((2 * Math.PI * bin) / length);
  const period = length / bin;
  while (delay < 0) delay += period;
  return delay;
}

describe('latency, DC gain, reset', () => {
  for (const quality of QUALITIES) {
    for (const factor of FACTORS) {
      it(`${quality} ${factor}x: latencyBaseSamples equals the measured low-frequency delay`, () => {
        const os = new Oversampler(factor, { quality });
        // 16384-sample record, bin 16: 0.00098·fs (47 Hz at 48 kHz). Phase delay → group
        // delay at DC as f → 0 (odd phase).
        const delay = measuredDelay(os, 16, 16384);
        expect(Math.abs(delay - os.latencyBaseSamples)).toBeLessThan(1e-3);
        if (quality === 'offline') {
          // Linear phase (symmetric FIR): the same delay at every passband frequency (textbook
          // property). Above bin 16384/64 the phase only fixes the delay modulo one period.
          for (const bin of [200, 1500, 3100, 4700, 6100]) {
            const period = 16384 / bin;
            let diff = measuredDelay(os, bin, 16384) - os.latencyBaseSamples;
            diff -= period * Math.round(diff / period);
            expect(Math.abs(diff)).toBeLessThan(1e-6);
          }
        }
      });

      it(`${quality} ${factor}x: a step settles to the input value (DC gain 1)`, () => {
        const os = new Oversampler(factor, { quality });
        os.reset(0);
        const value = 0.8125;
        const buf = new Float64Array(factor);
        let last = 0;
        for (let n = 0; n < 4000; n++) {
          os.upsample(value, buf);
          last = os.downsample(buf);
        }
        os.upsample(value, buf);
        for (const v of buf) expect(Math.abs(v - value)).toBeLessThan(1e-14);
        expect(Math.abs(last - value)).toBeLessThan(1e-14);
      });

      it(`${quality} ${factor}x: reset(value) gives no transient for a DC input`, () => {
        const os = new Oversampler(factor, { quality });
        const value = -231.5; // e.g. a plate-voltage-sized offset
        const buf = new Float64Array(factor);
        os.reset(value);
        let worst = 0;
        for (let n = 0; n < 300; n++) {
          os.upsample(value, buf);
          for (const v of buf) worst = Math.max(worst, Math.abs(v - value));
          worst = Math.max(worst, Math.abs(os.downsample(buf) - value));
        }
        expect(worst).toBeLessThan(Math.abs(value) * 1e-14);
        // Control: from the zero state the same input does ring.
        os.reset(0);
        os.upsample(value, buf);
        expect(Math.abs(os.downsample(buf) - value)).toBeGreaterThan(1);
      });

      it(`${quality} ${factor}x: no denormal limit cycle after an impulse and silence`, () => {
        // Recursive filters with rounding can keep a zero-input limit cycle (common practice,
        // e.g. Oppenheim & Schafer §6.9, from memory); at the smallest denormals it is slow.
        const os = new Oversampler(factor, { quality });
        const buf = new Float64Array(factor);
        os.reset(0);
        os.upsample(1, buf);
        os.downsample(buf);
        const MIN_NORMAL = 2.2250738585072014e-308; // IEEE 754 binary64
        let denormals = 0;
        for (let n = 0; n < 30000; n++) {
          os.upsample(0, buf);
          const y = os.downsample(buf);
          if (n < 25000) continue;
          for (const v of [y, ...buf]) if (v !== 0 && Math.abs(v) < MIN_NORMAL) denormals++;
        }
        expect(denormals).toBe(0);
      });

      it(`${quality} ${factor}x: finite output for hostile input`, () => {
        const os = new Oversampler(factor, { quality });
        const buf = new Float64Array(factor);
        const hostile = [Number.NaN, Number.POSITIVE_INFINITY, -1e308, 1e308, Number.NEGATIVE_INFINITY, 1e-310];
        let seed = 12345;
        for (let n = 0; n < 2000; n++) {
          seed = (seed * 1103515245 + 12345) % 2147483648;
          const x = n % 7 === 0 ? (hostile[n % hostile.length] as number) : (seed / 2147483648 - 0.5) * 1e300;
          os.upsample(x, buf);
          for (const v of buf) expect(Number.isFinite(v)).toBe(true);
          buf[n % factor] = Number.NaN; // a model that misbehaves
          expect(Number.isFinite(os.downsample(buf))).toBe(true);
        }
      });
    }
  }
});

describe('1x and bad input', () => {
  it('1x is the identity with zero latency', () => {
    const os = new Oversampler(1);
    expect(os.latencyBaseSamples).toBe(0);
    const buf = new Float64Array(1);
    for (let n = 0; n < 100; n++) {
      const x = Math.sin(n * 1.7) * 3.25;
      os.upsample(x, buf);
      expect(buf[0]).toBe(x);
      expect(os.downsample(buf)).toBe(x);
    }
  });

  it('rejects bad factors and qualities with a one-line message', () => {
    expect(() => new Oversampler(3 as OversamplingFactor)).toThrow(/^Oversampler: factor must be 1, 2, 4, 8, 16, 32, 64 or 128, got 3$/);
    expect(() => new Oversampler(4, { quality: 'best' as OversamplingQuality })).toThrow(/quality must be 'live' or 'offline'/);
  });

  it('rejects buffers shorter than the factor', () => {
    const os = new Oversampler(8);
    expect(() => os.upsample(0, new Float64Array(4))).toThrow(/^Oversampler.upsample: out has 4 samples, needs 8$/);
    expect(() => os.downsample(new Float64Array(2))).toThrow(/^Oversampler.downsample: block has 2 samples, needs 8$/);
  });

  it('default quality: live up to 8x, offline for 16x and 32x', () => {
    expect(new Oversampler(8).quality).toBe('live');
    expect(new Oversampler(16).quality).toBe('offline');
  });

  it('live 4x and 8x add less than 1 ms at 48 kHz (brief target)', () => {
    expect(new Oversampler(4).latencyBaseSamples / 48000).toBeLessThan(1e-3);
    expect(new Oversampler(8).latencyBaseSamples / 48000).toBeLessThan(1e-3);
  });
});
