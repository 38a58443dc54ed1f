// Plucked string: the extended Karplus-Strong loop of Jaffe & Smith, "Extensions of the
// Karplus-Strong plucked-string algorithm" (Computer Music Journal, 1983), built on
// Karplus & Strong, "Digital synthesis of plucked-string and drum timbres" (CMJ, 1983).
// Loop: integer delay line -> one-pole loss filter -> first-order allpass tuning filter.
// The loop's total phase delay at f0 is set to exactly fs/f0 samples, so the pitch is exact.
// The loss filter is the one-pole form used by Valimaki et al. (1996) (from memory).

import { makeRandom } from '../random.ts';

export { makeRandom };

export interface StringLoopDesign {
  /** fs / f0: the loop's required total phase delay at f0, in samples. */
  readonly totalDelaySamples: number;
  readonly integerDelaySamples: number;
  /** Loss filter H(z) = g (1 + a) / (1 + a z^-1): DC gain g and pole coefficient a. */
  readonly lossGain: number;
  readonly lossPole: number;
  /** Allpass H(z) = (C + z^-1) / (1 + C z^-1). */
  readonly allpassCoefficient: number;
}

function check(cond: boolean, message: string): void {
  if (!cond) throw new Error(message);
}

/** Per-trip loop gain that gives a 60 dB decay in t60Seconds at a loop rate of f0 trips per second. */
export function loopGainForT60(t60Seconds: number, frequencyHz: number): number {
  return 10 ** (-3 / (t60Seconds * frequencyHz));
}

/** Phase delay (samples) of the one-pole loss filter at frequencyHz. */
export function lossPhaseDelaySamples(lossPole: number, frequencyHz: number, sampleRateHz: number): number {
  const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
  return Math.atan2(-lossPole * Math.sin(w), 1 + lossPole * Math.cos(w)) / w;
}

/** Phase delay (samples) of the first-order allpass (C + z^-1)/(1 + C z^-1) at frequencyHz. */
export function allpassPhaseDelaySamples(coefficient: number, frequencyHz: number, sampleRateHz: number): number {
  const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
  return 1 - (2 / w) * Math.atan2(coefficient * Math.sin(w), 1 + coefficient * Math.cos(w));
}

/**
 * Designs the loop for pitch f0 with a 60 dB decay time decayLowSeconds at low frequency and
 * decayHighSeconds at decayHighHz.
 */
export function designStringLoop(
  frequencyHz: number,
  sampleRateHz: number,
  decayLowSeconds: number,
  decayHighSeconds: number,
  decayHighHz: number,
): StringLoopDesign {
  check(Number.isFinite(sampleRateHz) && sampleRateHz >= 8000, `sample rate must be at least 8000 Hz (got ${sampleRateHz})`);
  check(
    Number.isFinite(frequencyHz) && frequencyHz >= 20 && frequencyHz <= sampleRateHz / 8,
    `string frequency must be from 20 Hz to fs/8 = ${sampleRateHz / 8} Hz (got ${frequencyHz})`,
  );
  check(Number.isFinite(decayLowSeconds) && decayLowSeconds > 0, `low-frequency decay time must be above 0 s (got ${decayLowSeconds})`);
  check(Number.isFinite(decayHighSeconds) && decayHighSeconds > 0, `high-frequency decay time must be above 0 s (got ${decayHighSeconds})`);
  check(
    Number.isFinite(decayHighHz) && decayHighHz > frequencyHz && decayHighHz < sampleRateHz / 2,
    `decay reference frequency must lie between f0 and Nyquist (got ${decayHighHz} Hz)`,
  );
  const g = loopGainForT60(decayLowSeconds, frequencyHz);
  const gh = loopGainForT60(Math.min(decayHighSeconds, decayLowSeconds), frequencyHz);
  // |H(w_h)| = gh: (1 - r^2) a^2 + 2 (1 - r^2 cos w) a + (1 - r^2) = 0, root inside the unit circle.
  const r = gh / g;
  let a = 0;
  if (r < 1) {
    const c = Math.cos((2 * Math.PI * decayHighHz) / sampleRateHz);
    const p = 1 - r * r * c;
    const q = 1 - r * r;
    a = (-p + Math.sqrt(p * p - q * q)) / q;
  }
  const totalDelaySamples = sampleRateHz / frequencyHz;
  const lossDelay = lossPhaseDelaySamples(a, frequencyHz, sampleRateHz);
  // Keep the allpass delay in [0.5, 1.5) samples, where the first-order allpass is well behaved.
  const integerDelaySamples = Math.floor(totalDelaySamples - lossDelay - 0.5);
  check(integerDelaySamples >= 1, `string frequency ${frequencyHz} Hz is too high for the loop at ${sampleRateHz} Hz`);
  const tau = totalDelaySamples - lossDelay - integerDelaySamples;
  // Exact allpass coefficient for phase delay tau at w0: C = sin(w0 (1 - tau)/2) / sin(w0 (1 + tau)/2).
  const w0 = (2 * Math.PI * frequencyHz) / sampleRateHz;
  const allpassCoefficient = Math.sin((w0 * (1 - tau)) / 2) / Math.sin((w0 * (1 + tau)) / 2);
  return { totalDelaySamples, integerDelaySamples, lossGain: g, lossPole: a, allpassCoefficient };
}

/** Total loop phase delay (samples) at frequencyHz: delay line + loss filter + allpass. */
export function loopPhaseDelaySamples(design: StringLoopDesign, frequencyHz: number, sampleRateHz: number): number {
  return (
    design.integerDelaySamples +
    lossPhaseDelaySamples(design.lossPole, frequencyHz, sampleRateHz) +
    allpassPhaseDelaySamples(design.allpassCoefficient, frequencyHz, sampleRateHz)
  );
}

/** Pick contact time (s): a hard pick releases the string in tens of microseconds, flesh in about a millisecond (by ear). */
export function pickContactSeconds(pickHardness: number, velocity: number): number {
  return (1.2e-3 * (1 - pickHardness) ** 1.5 + 3e-5) * (1.25 - 0.5 * velocity);
}

/**
 * One period of the velocity wave a pluck puts into the loop. A string released from a
 * triangle at fraction beta of its length from the bridge has a zero-mean rectangular
 * velocity wave of duty beta, harmonic n ~ sin(n pi beta)/n (the pick-position comb of
 * Jaffe & Smith). Its edges are rounded by a Hann kernel as long as the pick contact
 * (pick hardness), and a little seeded noise adds the random part of the original KS table.
 */
export function pluckExcitation(
  periodSamples: number,
  pluckPosition: number,
  pickHardness: number,
  velocity: number,
  sampleRateHz: number,
  seed: number,
): Float64Array {
  check(Number.isFinite(periodSamples) && periodSamples >= 2, `string period must be at least 2 samples (got ${periodSamples})`);
  check(
    Number.isFinite(pluckPosition) && pluckPosition > 0 && pluckPosition <= 0.5,
    `pluck position must be a fraction in (0, 0.5] of the string (got ${pluckPosition})`,
  );
  check(Number.isFinite(pickHardness) && pickHardness >= 0 && pickHardness <= 1, `pick hardness must be from 0 to 1 (got ${pickHardness})`);
  check(Number.isFinite(velocity) && velocity >= 0 && velocity <= 1, `velocity must be from 0 to 1 (got ${velocity})`);
  const m = Math.round(periodSamples);
  const width = pluckPosition * periodSamples;
  const raw = new Float64Array(m);
  for (let n = 0; n < m; n++) {
    // Fraction of sample cell [n, n+1) inside [0, width).
    raw[n] = Math.max(0, Math.min(1, width - n));
  }
  const kernelLength = Math.max(1, Math.round(pickContactSeconds(pickHardness, velocity) * sampleRateHz));
  const kernel = new Float64Array(kernelLength);
  let kernelSum = 0;
  for (let i = 0; i < kernelLength; i++) {
    const v = kernelLength === 1 ? 1 : 0.5 - 0.5 * Math.cos((2 * Math.PI * (i + 0.5)) / kernelLength);
    kernel[i] = v;
    kernelSum += v;
  }
  const out = new Float64Array(m);
  const rand = makeRandom(seed);
  const noiseLevel = 0.06 * (0.3 + 0.7 * pickHardness);
  let mean = 0;
  for (let n = 0; n < m; n++) {
    let acc = 0;
    for (let i = 0; i < kernelLength; i++) acc += (kernel[i] as number) * (raw[(((n - i) % m) + m) % m] as number);
    const v = acc / kernelSum + noiseLevel * (rand() - 0.5);
    out[n] = v;
    mean += v;
  }
  mean /= m;
  for (let n = 0; n < m; n++) out[n] = (out[n] as number) - mean;
  return out;
}

export interface PluckRender {
  readonly design: StringLoopDesign;
  readonly excitation: Float64Array;
  /** Sample at which the string is muted (note off). */
  readonly releaseSample: number;
  /** 60 dB decay time after the mute. */
  readonly releaseSeconds: number;
  readonly frequencyHz: number;
  readonly sampleRateHz: number;
}

/** Runs the loop, writing the bridge-side velocity wave into `out` (its length sets the render length). */
export function renderPluckedString(p: PluckRender, out: Float64Array): Float64Array {
  const d = p.design;
  check(Number.isFinite(p.releaseSeconds) && p.releaseSeconds > 0, `release time must be above 0 s (got ${p.releaseSeconds})`);
  const n1 = d.integerDelaySamples;
  const line = new Float64Array(n1);
  const gl = d.lossGain * (1 + d.lossPole);
  const a = d.lossPole;
  const c = d.allpassCoefficient;
  const mute = loopGainForT60(p.releaseSeconds, p.frequencyHz);
  const ex = p.excitation;
  let w = 0;
  let lp = 0;
  let lpPrev = 0;
  let ap = 0;
  for (let n = 0; n < out.length; n++) {
    const delayed = line[w] as number; // y[n - N]
    lp = gl * delayed - a * lp;
    ap = c * lp + lpPrev - c * ap;
    lpPrev = lp;
    const fb = n >= p.releaseSample ? mute * ap : ap;
    const y = (n < ex.length ? (ex[n] as number) : 0) + fb;
    line[w] = y;
    w = w + 1 === n1 ? 0 : w + 1;
    out[n] = y;
  }
  return out;
}
