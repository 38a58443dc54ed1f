// Test signals and the error measure shared by the engine-against-reference tests.

/**
 * Guitar-like drive: a decaying chord (110 Hz, 165 Hz and, with `withOctave`, 440 Hz) at
 * `peakVolts`; a hard pick decays at about 4 per second (common practice for a plucked string's
 * envelope, from memory).
 */
export function drive(fs: number, seconds: number, peakVolts: number, withOctave = true): Float64Array {
  const n = Math.round(fs * seconds);
  const x = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const t = k / fs;
    const chord =
      0.6 * Math.sin(2 * Math.PI * 110 * t) + 0.3 * Math.sin(2 * Math.PI * 165 * t + 1) + (withOctave ? 0.1 * Math.sin(2 * Math.PI * 440 * t + 2) : 0);
    x[k] = peakVolts * Math.exp(-4 * t) * chord;
  }
  return x;
}

/**
 * Error energy of y against ref, in dB relative to the energy of ref's deviation from its first
 * sample (the operating point): 10 log10(sum (y - ref)^2 / sum (ref - ref[0])^2). A y that is
 * not finite anywhere gives +Infinity.
 */
export function errorDb(y: ArrayLike<number>, ref: ArrayLike<number>): number {
  const dc = ref[0]!;
  let es = 0,
    ee = 0;
  for (let k = 0; k < ref.length; k++) {
    es += (ref[k]! - dc) ** 2;
    ee += (y[k]! - ref[k]!) ** 2;
  }
  if (!Number.isFinite(ee)) return Infinity;
  return 10 * Math.log10(ee / es);
}

/**
 * A sine switched on and off abruptly: `peakVolts` at `hz`, on from `onSeconds` to `offSeconds`
 * (the cut lands wherever the phase is, the hard edge a cable plug or an edited take makes).
 */
export function gatedSine(fs: number, seconds: number, hz: number, peakVolts: number, onSeconds: number, offSeconds: number, phase = 0): Float64Array {
  const n = Math.round(fs * seconds);
  const x = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const t = k / fs;
    if (t >= onSeconds && t < offSeconds) x[k] = peakVolts * Math.sin(2 * Math.PI * hz * (t - onSeconds) + phase);
  }
  return x;
}

/** One-sample steps: the input jumps to each level at each time (seconds) and holds it. */
export function steps(fs: number, seconds: number, at: readonly (readonly [number, number])[]): Float64Array {
  const n = Math.round(fs * seconds);
  const x = new Float64Array(n);
  for (const [t0, volts] of at) for (let k = Math.round(t0 * fs); k < n; k++) x[k] = volts;
  return x;
}

/**
 * A plucked note: a sawtooth-rich attack (the string released from a point) decaying
 * exponentially, started abruptly at `startSeconds` (common practice as a test stand-in for a
 * pick attack, from memory).
 */
export function pluck(fs: number, seconds: number, hz: number, peakVolts: number, startSeconds: number, decayPerSecond = 8): Float64Array {
  const n = Math.round(fs * seconds);
  const x = new Float64Array(n);
  for (let k = Math.round(startSeconds * fs); k < n; k++) {
    const t = k / fs - startSeconds;
    let s = 0;
    for (let h = 1; h <= 8; h++) s += Math.sin(2 * Math.PI * hz * h * t) / h;
    x[k] = (peakVolts / 1.7) * Math.exp(-decayPerSecond * t) * s;
  }
  return x;
}
