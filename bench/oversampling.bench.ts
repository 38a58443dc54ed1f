// Oversampler cost, measured rejection and latency per factor and quality. Prints JSON.
// Run: npx tsx bench/oversampling.bench.ts
import { Oversampler, PASSBAND_EDGE_OF_BASE_RATE, type OversamplingFactor, type OversamplingQuality } from '../src/dsp/oversampling/index.ts';

const FACTORS: readonly OversamplingFactor[] = [1, 2, 4, 8, 16, 32];
const QUALITIES: readonly OversamplingQuality[] = ['live', 'offline'];
const N = 2048; // analysis record, base samples
const SKIP = 1024;

/** Amplitude of bin k in y[start … start+len-1] under a periodic Hann window. */
function amplitude(y: Float64Array, start: number, len: number, bin: number): number {
  let re = 0;
  let im = 0;
  let wSum = 0;
  for (let n = 0; n < len; n++) {
    const w = 0.5 - 0.5 * Math.cos((2 * Math.PI * n) / len);
    const arg = (2 * Math.PI * bin * n) / len;
    re += w * (y[start + n] as number) * Math.cos(arg);
    im += w * (y[start + n] as number) * Math.sin(arg);
    wSum += w;
  }
  return (2 * Math.hypot(re, im)) / wSum;
}

function passBins(count: number): number[] {
  const edge = Math.round(PASSBAND_EDGE_OF_BASE_RATE * N);
  return Array.from({ length: count }, (_, i) => Math.max(2, Math.round((edge * (i + 1)) / count)));
}

/** Worst tone folding into 0…fp on downsampling, dB below a full-scale tone. */
function aliasRejectionDb(os: Oversampler): number {
  const F = os.factor;
  const block = new Float64Array(F);
  const out = new Float64Array(SKIP + N);
  let worst = 0;
  for (let j = 1; j <= F / 2; j++) {
    for (const k of passBins(F >= 16 ? 6 : 16)) {
      for (const side of [-1, 1]) {
        const g = j + (side * k) / N;
        if (g > F / 2) continue;
        os.reset(0);
        for (let n = 0; n < out.length; n++) {
          for (let m = 0; m < F; m++) block[m] = Math.cos((2 * Math.PI * g * (n * F + m)) / F);
          out[n] = os.downsample(block);
        }
        worst = Math.max(worst, amplitude(out, SKIP, N, k));
      }
    }
  }
  return -20 * Math.log10(worst);
}

/** Worst image of a 0…fp tone on upsampling, dB below the tone. */
function imageRejectionDb(os: Oversampler): number {
  const F = os.factor;
  const hi = new Float64Array((SKIP + N) * F);
  const buf = new Float64Array(F);
  let worst = 0;
  for (const k of passBins(F >= 16 ? 4 : 8)) {
    os.reset(0);
    for (let n = 0; n < SKIP + N; n++) {
      os.upsample(Math.cos((2 * Math.PI * k * n) / N), buf);
      hi.set(buf, n * F);
    }
    for (let j = 1; j <= F / 2; j++) {
      for (const bin of [j * N - k, j * N + k]) {
        if (bin < (F * N) / 2) worst = Math.max(worst, amplitude(hi, SKIP * F, N * F, bin));
      }
    }
  }
  return -20 * Math.log10(worst);
}

/** Worst passband deviation of up+down, dB, tones up to fp. */
function passbandDeviationDb(os: Oversampler): number {
  const buf = new Float64Array(os.factor);
  const out = new Float64Array(SKIP + N);
  let worst = 0;
  for (const k of passBins(24)) {
    os.reset(0);
    for (let n = 0; n < out.length; n++) {
      os.upsample(Math.cos((2 * Math.PI * k * n) / N), buf);
      out[n] = os.downsample(buf);
    }
    worst = Math.max(worst, Math.abs(20 * Math.log10(amplitude(out, SKIP, N, k))));
  }
  return worst;
}

/** ns per base sample for upsample + downsample (median of 7 runs). */
function costNs(os: Oversampler): number {
  const buf = new Float64Array(os.factor);
  const samples = Math.max(1 << 14, (1 << 20) / os.factor);
  const input = new Float64Array(samples);
  for (let n = 0; n < samples; n++) input[n] = Math.sin(n * 0.05) * 0.5;
  let sink = 0;
  const run = (): number => {
    os.reset(0);
    const t0 = process.hrtime.bigint();
    for (let n = 0; n < samples; n++) {
      os.upsample(input[n] as number, buf);
      sink += os.downsample(buf);
    }
    return Number(process.hrtime.bigint() - t0) / samples;
  };
  run();
  run();
  const times = Array.from({ length: 7 }, run).sort((a, b) => a - b);
  if (!Number.isFinite(sink)) throw new Error('oversampling bench: non-finite output');
  return times[3] as number;
}

const round = (x: number, digits: number): number => Number(x.toFixed(digits));

const results = [];
for (const quality of QUALITIES) {
  for (const factor of FACTORS) {
    const os = new Oversampler(factor, { quality });
    const identity = factor === 1;
    results.push({
      factor,
      quality,
      stages: os.stageDesigns.map((d) =>
        d.kind === 'iir'
          ? {
              kind: 'iir-allpass',
              coefficients: d.path0Coefficients.length + d.path1Coefficients.length,
              designedAttenuationDb: round(d.predictedAttenuationDb, 2),
            }
          : { kind: 'fir-kaiser', taps: d.taps.length, designedAttenuationDb: round(d.predictedAttenuationDb, 2) },
      ),
      costNsPerBaseSampleUpDown: round(costNs(os), 1),
      aliasRejectionDb: identity ? null : round(aliasRejectionDb(os), 2),
      imageRejectionDb: identity ? null : round(imageRejectionDb(os), 2),
      passbandDeviationDbTo18kAt48k: round(passbandDeviationDb(os), 9),
      latencyBaseSamples: round(os.latencyBaseSamples, 4),
      latencyMsAt48k: round((os.latencyBaseSamples / 48000) * 1000, 4),
      latencyMsAt44k1: round((os.latencyBaseSamples / 44100) * 1000, 4),
    });
  }
}

console.log(
  JSON.stringify(
    {
      command: 'npx tsx bench/oversampling.bench.ts',
      node: process.version,
      passbandEdgeHz: { at48k: PASSBAND_EDGE_OF_BASE_RATE * 48000, at44k1: PASSBAND_EDGE_OF_BASE_RATE * 44100 },
      notes: 'rejection = worst tone folding into (or imaged from) 0…fp, dB below a unit tone; cost = upsample + downsample only (no model), median of 7 runs',
      results,
    },
    null,
    2,
  ),
);
