// Meter scaling: levels to bar fractions, peak hold with decay, and readable numbers.

/** Full-scale amplitude to dBFS (floored at floorDb; 0 and negatives give floorDb). */
export function toDbfs(amplitude: number, floorDb = -120): number {
  if (!(amplitude > 0) || !Number.isFinite(amplitude)) return floorDb;
  return Math.max(floorDb, 20 * Math.log10(amplitude));
}

/** dBFS to a 0..1 bar fraction on a linear-in-dB scale from minDb to 0 dB (clamped). */
export function dbfsFraction(db: number, minDb = -60): number {
  if (!Number.isFinite(db)) return 0;
  return Math.min(1, Math.max(0, (db - minDb) / -minDb));
}

/**
 * Volts to a 0..1 fraction on a log scale between lowVolts and highVolts
 * (a guitar DI spans about 1 mV to a few volts).
 */
export function voltsFraction(volts: number, lowVolts = 1e-3, highVolts = 3): number {
  if (!(volts > lowVolts)) return 0;
  return Math.min(1, Math.log(volts / lowVolts) / Math.log(highVolts / lowVolts));
}

/** Peak hold: rises at once, falls by decayDbPerSecond after holdSeconds. Levels in dB. */
export interface PeakHold {
  readonly db: number;
  readonly heldSeconds: number;
}
export function stepPeakHold(h: PeakHold, inputDb: number, dtSeconds: number, holdSeconds = 1, decayDbPerSecond = 20): PeakHold {
  if (inputDb >= h.db) return { db: inputDb, heldSeconds: 0 };
  const held = h.heldSeconds + dtSeconds;
  if (held < holdSeconds) return { db: h.db, heldSeconds: held };
  return { db: Math.max(inputDb, h.db - decayDbPerSecond * dtSeconds), heldSeconds: held };
}

/** "-12.3 dBFS", "−∞" under the floor. */
export function formatDbfs(db: number, floorDb = -120): string {
  return db <= floorDb ? '-inf dBFS' : `${db.toFixed(1)} dBFS`;
}

/** Volts with a sensible prefix: 0.0123 -> "12.3 mV". */
export function formatVolts(volts: number): string {
  const a = Math.abs(volts);
  if (!Number.isFinite(volts)) return '—';
  if (a >= 1 || a === 0) return `${volts.toFixed(a >= 100 ? 0 : a >= 10 ? 1 : 2)} V`;
  if (a >= 1e-3) return `${(volts * 1e3).toFixed(a >= 0.1 ? 0 : 1)} mV`;
  return `${(volts * 1e6).toFixed(0)} µV`;
}

/** Log-frequency axis: hertz to 0..1 between 20 Hz and 20 kHz (clamped). */
export function logFreqFraction(hertz: number, lowHertz = 20, highHertz = 20000): number {
  if (!(hertz > 0)) return 0;
  return Math.min(1, Math.max(0, Math.log(hertz / lowHertz) / Math.log(highHertz / lowHertz)));
}

/** n log-spaced frequencies from lowHertz to highHertz inclusive. */
export function logFrequencies(n: number, lowHertz = 20, highHertz = 20000): number[] {
  const out: number[] = [];
  for (let k = 0; k < n; k++) out.push(lowHertz * Math.pow(highHertz / lowHertz, n === 1 ? 0 : k / (n - 1)));
  return out;
}

/**
 * Peak at or above -0.1 dBFS of the source: the interface (or the file) is clipping, and the
 * circuit is fed a flattened wave that adds fuzz the design did not make. (The -0.1 dBFS mark
 * is common practice for clip indicators, no source.)
 */
export const CLIP_FRACTION_OF_FULL_SCALE = Math.pow(10, -0.1 / 20);

/** True when a circuit-input peak (volts) is at the source's full scale for this calibration. */
export function inputAtFullScale(peakVolts: number, voltsAtFullScale: number): boolean {
  if (!(voltsAtFullScale > 0) || !Number.isFinite(peakVolts)) return false;
  return peakVolts >= CLIP_FRACTION_OF_FULL_SCALE * voltsAtFullScale;
}
