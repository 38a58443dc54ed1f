// Second-order sections, analog-prototype design by the bilinear transform, and
// exact frequency responses of the resulting digital filters. Float64 throughout.

/** Digital biquad, a0 normalised to 1: H(z) = (b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2). */
export interface Biquad {
  readonly b0: number;
  readonly b1: number;
  readonly b2: number;
  readonly a1: number;
  readonly a2: number;
}

/** Analog second-order section H(s) = (n2 s^2 + n1 s + n0) / (d2 s^2 + d1 s + d0), s in rad/s. */
export interface AnalogBiquad {
  readonly n2: number;
  readonly n1: number;
  readonly n0: number;
  readonly d2: number;
  readonly d1: number;
  readonly d0: number;
}

function assertFinitePositive(value: number, what: string): void {
  if (!Number.isFinite(value) || value <= 0) {
    throw new Error(`${what} must be a finite number above 0 (got ${String(value)})`);
  }
}

/**
 * Bilinear transform s = K (1 - z^-1)/(1 + z^-1) with frequency prewarping:
 * K = w_p / tan(w_p / (2 fs)) so the digital response equals the analog one exactly at
 * prewarpHz (standard textbook form, e.g. Oppenheim & Schafer, bilinear transformation).
 */
export function bilinear(analog: AnalogBiquad, sampleRateHz: number, prewarpHz: number): Biquad {
  assertFinitePositive(sampleRateHz, 'sample rate (Hz)');
  assertFinitePositive(prewarpHz, 'prewarp frequency (Hz)');
  if (prewarpHz >= sampleRateHz / 2) {
    throw new Error(`prewarp frequency ${prewarpHz} Hz must be below Nyquist (${sampleRateHz / 2} Hz)`);
  }
  const wp = 2 * Math.PI * prewarpHz;
  const k = wp / Math.tan(wp / (2 * sampleRateHz));
  const k2 = k * k;
  const { n2, n1, n0, d2, d1, d0 } = analog;
  if (n2 === 0 && d2 === 0) {
    // First-order section: transform it as such (no cancelling pole/zero pair at z = -1).
    const f0 = d1 * k + d0;
    if (!Number.isFinite(f0) || f0 === 0) {
      throw new Error('analog section has a degenerate denominator for the bilinear transform');
    }
    return { b0: (n1 * k + n0) / f0, b1: (n0 - n1 * k) / f0, b2: 0, a1: (d0 - d1 * k) / f0, a2: 0 };
  }
  const a0 = d2 * k2 + d1 * k + d0;
  if (!Number.isFinite(a0) || a0 === 0) {
    throw new Error('analog section has a degenerate denominator for the bilinear transform');
  }
  return {
    b0: (n2 * k2 + n1 * k + n0) / a0,
    b1: (2 * n0 - 2 * n2 * k2) / a0,
    b2: (n2 * k2 - n1 * k + n0) / a0,
    a1: (2 * d0 - 2 * d2 * k2) / a0,
    a2: (d2 * k2 - d1 * k + d0) / a0,
  };
}

/** Complex response of a digital biquad at frequencyHz. */
export function biquadResponse(bq: Biquad, frequencyHz: number, sampleRateHz: number): { re: number; im: number } {
  const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
  const c1 = Math.cos(w);
  const s1 = Math.sin(w);
  const c2 = Math.cos(2 * w);
  const s2 = Math.sin(2 * w);
  const nr = bq.b0 + bq.b1 * c1 + bq.b2 * c2;
  const ni = -(bq.b1 * s1 + bq.b2 * s2);
  const dr = 1 + bq.a1 * c1 + bq.a2 * c2;
  const di = -(bq.a1 * s1 + bq.a2 * s2);
  const den = dr * dr + di * di;
  return { re: (nr * dr + ni * di) / den, im: (ni * dr - nr * di) / den };
}

export function biquadMagnitude(bq: Biquad, frequencyHz: number, sampleRateHz: number): number {
  const r = biquadResponse(bq, frequencyHz, sampleRateHz);
  return Math.hypot(r.re, r.im);
}

/** Magnitude of an analog section at frequencyHz. */
export function analogMagnitude(a: AnalogBiquad, frequencyHz: number): number {
  const w = 2 * Math.PI * frequencyHz;
  const nr = a.n0 - a.n2 * w * w;
  const ni = a.n1 * w;
  const dr = a.d0 - a.d2 * w * w;
  const di = a.d1 * w;
  return Math.hypot(nr, ni) / Math.hypot(dr, di);
}

/** Filters `input` into `output` (may be the same array) with a transposed direct form II. */
export function runBiquad(bq: Biquad, input: ArrayLike<number>, output: Float64Array): Float64Array {
  if (output.length < input.length) throw new Error('biquad output buffer is shorter than its input');
  let s1 = 0;
  let s2 = 0;
  for (let n = 0; n < input.length; n++) {
    const x = input[n] ?? 0;
    const y = bq.b0 * x + s1;
    s1 = bq.b1 * x - bq.a1 * y + s2;
    s2 = bq.b2 * x - bq.a2 * y;
    output[n] = y;
  }
  return output;
}

/** Analog second-order low-pass w0^2 / (s^2 + (w0/Q) s + w0^2). */
export function analogLowpass2(cornerHz: number, q: number): AnalogBiquad {
  assertFinitePositive(cornerHz, 'low-pass corner (Hz)');
  assertFinitePositive(q, 'low-pass Q');
  const w0 = 2 * Math.PI * cornerHz;
  return { n2: 0, n1: 0, n0: w0 * w0, d2: 1, d1: w0 / q, d0: w0 * w0 };
}

/** Analog second-order high-pass s^2 / (s^2 + (w0/Q) s + w0^2). */
export function analogHighpass2(cornerHz: number, q: number): AnalogBiquad {
  assertFinitePositive(cornerHz, 'high-pass corner (Hz)');
  assertFinitePositive(q, 'high-pass Q');
  const w0 = 2 * Math.PI * cornerHz;
  return { n2: 1, n1: 0, n0: 0, d2: 1, d1: w0 / q, d0: w0 * w0 };
}

/**
 * Analog peaking section (s^2 + s (A/Q) w0 + w0^2) / (s^2 + s w0/(A Q) + w0^2), A = 10^(dB/40):
 * the analog prototype of the peaking filter in R. Bristow-Johnson's "Audio EQ Cookbook".
 * Its gain at w0 is exactly A^2 (gainDb).
 */
export function analogPeak(centreHz: number, gainDb: number, q: number): AnalogBiquad {
  assertFinitePositive(centreHz, 'peak centre (Hz)');
  assertFinitePositive(q, 'peak Q');
  if (!Number.isFinite(gainDb)) throw new Error(`peak gain must be finite dB (got ${String(gainDb)})`);
  const a = 10 ** (gainDb / 40);
  const w0 = 2 * Math.PI * centreHz;
  return { n2: 1, n1: (a / q) * w0, n0: w0 * w0, d2: 1, d1: w0 / (a * q), d0: w0 * w0 };
}

/** Analog first-order low-pass w0 / (s + w0), as a degenerate second-order section. */
export function analogLowpass1(cornerHz: number): AnalogBiquad {
  assertFinitePositive(cornerHz, 'low-pass corner (Hz)');
  const w0 = 2 * Math.PI * cornerHz;
  return { n2: 0, n1: 0, n0: w0, d2: 0, d1: 1, d0: w0 };
}

/**
 * Q of each second-order section of an even-order Butterworth low-pass:
 * Q_k = 1 / (2 cos((2k - 1) pi / (2 n))), k = 1..n/2 (pole angles of the Butterworth
 * polynomial; common handbook formula).
 */
export function butterworthQs(order: number): number[] {
  if (!Number.isInteger(order) || order < 2 || order % 2 !== 0 || order > 16) {
    throw new Error(`Butterworth order must be an even integer from 2 to 16 (got ${String(order)})`);
  }
  const qs: number[] = [];
  for (let k = 1; k <= order / 2; k++) qs.push(1 / (2 * Math.cos(((2 * k - 1) * Math.PI) / (2 * order))));
  return qs;
}
