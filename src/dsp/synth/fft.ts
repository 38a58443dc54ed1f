// Radix-2 complex FFT (iterative Cooley-Tukey) and helpers for measuring spectra.

export function nextPowerOfTwo(n: number): number {
  if (!Number.isFinite(n) || n < 1) throw new Error(`FFT size must be at least 1 (got ${String(n)})`);
  let p = 1;
  while (p < n) p *= 2;
  return p;
}

/** In-place forward FFT, X[k] = sum x[n] e^{-j 2 pi k n / N}. Length must be a power of two. */
export function fftInPlace(re: Float64Array, im: Float64Array): void {
  const n = re.length;
  if (im.length !== n) throw new Error('FFT real and imaginary arrays differ in length');
  if (n === 0 || (n & (n - 1)) !== 0) throw new Error(`FFT length must be a power of two (got ${n})`);
  for (let i = 1, j = 0; i < n; i++) {
    let bit = n >> 1;
    for (; j & bit; bit >>= 1) j ^= bit;
    j ^= bit;
    if (i < j) {
      const tr = re[i] as number;
      re[i] = re[j] as number;
      re[j] = tr;
      const ti = im[i] as number;
      im[i] = im[j] as number;
      im[j] = ti;
    }
  }
  for (let len = 2; len <= n; len <<= 1) {
    const ang = (-2 * Math.PI) / len;
    const half = len >> 1;
    for (let k = 0; k < half; k++) {
      const wr = Math.cos(ang * k);
      const wi = Math.sin(ang * k);
      for (let i = k; i < n; i += len) {
        const j = i + half;
        const xr = re[j] as number;
        const xi = im[j] as number;
        const tr = xr * wr - xi * wi;
        const ti = xr * wi + xi * wr;
        const ur = re[i] as number;
        const ui = im[i] as number;
        re[i] = ur + tr;
        im[i] = ui + ti;
        re[j] = ur - tr;
        im[j] = ui - ti;
      }
    }
  }
}

/**
 * Magnitude spectrum |X[k]|, k = 0..fftSize/2, of `signal[start, start+length)` times an
 * optional window, zero-padded to fftSize (a power of two at least `length`).
 */
export function magnitudeSpectrum(
  signal: ArrayLike<number>,
  fftSize: number,
  options: { readonly start?: number; readonly length?: number; readonly hann?: boolean } = {},
): Float64Array {
  const start = options.start ?? 0;
  const length = options.length ?? signal.length - start;
  if (start < 0 || length < 1 || start + length > signal.length) {
    throw new Error(`spectrum window [${start}, ${start + length}) lies outside the signal (length ${signal.length})`);
  }
  if (length > fftSize) throw new Error(`spectrum window (${length}) is longer than the FFT size (${fftSize})`);
  const re = new Float64Array(fftSize);
  const im = new Float64Array(fftSize);
  for (let n = 0; n < length; n++) {
    const w = options.hann === true ? 0.5 - 0.5 * Math.cos((2 * Math.PI * (n + 0.5)) / length) : 1;
    re[n] = (signal[start + n] ?? 0) * w;
  }
  fftInPlace(re, im);
  const mag = new Float64Array(fftSize / 2 + 1);
  for (let k = 0; k < mag.length; k++) mag[k] = Math.hypot(re[k] as number, im[k] as number);
  return mag;
}

/**
 * Frequency of the largest bin of `mag` between loHz and hiHz, refined by a parabola
 * through the log magnitudes of the peak bin and its neighbours (a common interpolation;
 * near-exact for a Gaussian-like main lobe).
 */
export function peakFrequencyHz(
  mag: Float64Array,
  fftSize: number,
  sampleRateHz: number,
  loHz: number,
  hiHz: number,
): { frequencyHz: number; magnitude: number } {
  const binHz = sampleRateHz / fftSize;
  const lo = Math.max(1, Math.ceil(loHz / binHz));
  const hi = Math.min(mag.length - 2, Math.floor(hiHz / binHz));
  if (hi < lo) throw new Error(`peak search range ${loHz}-${hiHz} Hz holds no FFT bins`);
  let best = lo;
  for (let k = lo; k <= hi; k++) if ((mag[k] as number) > (mag[best] as number)) best = k;
  const floor = 1e-300;
  const a = Math.log(Math.max(mag[best - 1] as number, floor));
  const b = Math.log(Math.max(mag[best] as number, floor));
  const c = Math.log(Math.max(mag[best + 1] as number, floor));
  const den = a - 2 * b + c;
  const delta = den < 0 ? (0.5 * (a - c)) / den : 0;
  return { frequencyHz: (best + delta) * binHz, magnitude: Math.exp(b - 0.25 * (a - c) * delta) };
}
