// Input calibration helpers: the workspace's calibration is the voltage at the circuit input for
// a full-scale sample (volts peak). Interface spec sheets give the maximum input level in dBu
// instead: 0 dBu is the voltage that puts 1 mW into 600 ohms, sqrt(0.6) = 0.7746 V rms (the
// definition of the unit; common practice), and a full-scale sine's peak is sqrt(2) times its rms.

/** 0 dBu in volts rms (sqrt(0.6 W·Ω)). */
export const DBU_REFERENCE_VOLTS_RMS = Math.sqrt(0.6);

/** Volts peak of a full-scale sine at `dbu` (an interface's maximum input level). */
export function dbuToPeakVolts(dbu: number): number {
  return DBU_REFERENCE_VOLTS_RMS * Math.pow(10, dbu / 20) * Math.SQRT2;
}

/** Reasonable span of interface maximum input levels, dBu (instrument inputs about 0 to +15). */
export const DBU_RANGE = { min: -20, max: 30 } as const;

/** "+9", "9 dBu", "-2.5dBu" -> the number, or a reason it is refused. */
export function parseDbu(text: string): { ok: true; dbu: number } | { ok: false; reason: string } {
  const m = /^\s*([+-]?\d+(?:\.\d+)?)\s*(?:dbu)?\s*$/i.exec(text);
  if (!m) return { ok: false, reason: `"${text.trim()}" is not a level in dBu (for example +9 or 9 dBu)` };
  const dbu = Number(m[1]);
  if (dbu < DBU_RANGE.min || dbu > DBU_RANGE.max)
    return { ok: false, reason: `${dbu} dBu is outside ${DBU_RANGE.min} … +${DBU_RANGE.max} dBu, the range of interface inputs` };
  return { ok: true, dbu };
}

/** Calibration accepted by the workspace, volts at full scale. */
export const CALIBRATION_RANGE_VOLTS = { min: 1e-3, max: 50 } as const;

/** null if `volts` is a usable calibration, else the reason. */
export function calibrationProblem(volts: number): string | null {
  if (!Number.isFinite(volts) || volts < CALIBRATION_RANGE_VOLTS.min || volts > CALIBRATION_RANGE_VOLTS.max) {
    return `the calibration must lie between 1 mV and ${CALIBRATION_RANGE_VOLTS.max} V at full scale (a guitar gives about 0.1 to 2 V peak)`;
  }
  return null;
}
