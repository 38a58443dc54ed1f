// Alias measurement for a sine driven through a nonlinearity: the power at frequencies in a band
// that are not harmonics of the input, relative to the whole output's power.
import { fftInPlace } from '../synth/fft.ts';

export interface AliasReport {
  readonly fundamentalHz: number;
  /** Non-harmonic power in [bandLowHz, bandHighHz] relative to the total output power, dB. */
  readonly aliasDb: number;
  readonly bandLowHz: number;
  readonly bandHighHz: number;
}

/** 4-term Blackman-Harris window (Harris, Proc. IEEE 66(1), 1978): sidelobes below -92 dB. */
function blackmanHarris(n: number): Float64Array {
  const w = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const x = (2 * Math.PI * k) / (n - 1);
    w[k] = 0.35875 - 0.48829 * Math.cos(x) + 0.14128 * Math.cos(2 * x) - 0.01168 * Math.cos(3 * x);
  }
  return w;
}

/** Bins on either side of a harmonic that belong to it (the window's main lobe is ±4 bins). */
export const HARMONIC_GUARD_BINS = 6;

function isPrime(n: number): boolean {
  if (n < 2) return false;
  for (let d = 2; d * d <= n; d++) if (n % d === 0) return false;
  return true;
}

/**
 * A bin-exact test frequency near `targetHz` (FFT length n at fs) whose aliases, for folding
 * orders up to `maxFold`, land at least 2·guard bins away from every harmonic: the bin index b is
 * prime and m·n mod b stays away from 0 (an alias of harmonic k sits at m·n - k·b).
 */
export function aliasFreeTestFrequency(targetHz: number, fs: number, n: number, maxFold = 64): number {
  const bin = fs / n;
  const b0 = Math.round(targetHz / bin);
  for (let d = 0; d < 2000; d++) {
    for (const b of [b0 + d, b0 - d]) {
      if (!isPrime(b)) continue;
      let ok = true;
      for (let m = 1; m <= maxFold && ok; m++) {
        const r = (m * n) % b;
        if (Math.min(r, b - r) <= 2 * HARMONIC_GUARD_BINS) ok = false;
      }
      if (ok) return b * bin;
    }
  }
  throw new Error(`no alias-free test frequency near ${targetHz} Hz`);
}

/** Measure the aliasing in `signal` (length a power of two) for a sine input at `fundamentalHz`. */
export function measureAliasing(signal: Float64Array | Float32Array, fs: number, fundamentalHz: number, bandLowHz = 20, bandHighHz = 15000): AliasReport {
  const n = signal.length;
  if (n & (n - 1)) throw new Error('signal length must be a power of two');
  const w = blackmanHarris(n);
  let mean = 0;
  for (let k = 0; k < n; k++) mean += signal[k]!;
  mean /= n;
  const re = new Float64Array(n),
    im = new Float64Array(n);
  for (let k = 0; k < n; k++) re[k] = (signal[k]! - mean) * w[k]!;
  fftInPlace(re, im);
  const bin = fs / n;
  let total = 0,
    alias = 0;
  for (let k = 1; k < n / 2; k++) {
    const p = re[k]! * re[k]! + im[k]! * im[k]!;
    total += p;
    const f = k * bin;
    if (f < bandLowHz || f > bandHighHz) continue;
    const h = Math.round(f / fundamentalHz);
    const harmonic = h >= 1 && Math.abs(k - (h * fundamentalHz) / bin) <= HARMONIC_GUARD_BINS;
    if (!harmonic) alias += p;
  }
  return { fundamentalHz, aliasDb: 10 * Math.log10(alias / total), bandLowHz, bandHighHz };
}
