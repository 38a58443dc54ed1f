// Standard ratings to buy. The rating lists are common practice (catalogue
// values); derating electrolytics to ~80 % and resistors to ~50 % is from memory
// (common practice, tube amplifier design references, "Power supply and ratings").

/** Common capacitor DC voltage ratings, volts (common practice). */
export const CAPACITOR_VOLTAGE_RATINGS_VOLTS: readonly number[] = [16, 25, 35, 50, 63, 100, 160, 200, 250, 350, 400, 450, 500, 630, 1000];

/** Common resistor power ratings, watts (common practice). */
export const RESISTOR_WATTAGE_RATINGS_WATTS: readonly number[] = [0.125, 0.25, 0.5, 1, 2, 3, 5, 10];

export type RatingResult =
  { readonly ok: true; readonly rating: number; /** stress / rating */ readonly usedFraction: number } | { readonly ok: false; readonly reason: string };

function nextRating(stress: number, derate: number, list: readonly number[], what: string, unitSymbol: string): RatingResult {
  if (!Number.isFinite(stress) || stress < 0) {
    return { ok: false, reason: `${what}: stress must be a finite number ≥ 0, got ${String(stress)}` };
  }
  if (!Number.isFinite(derate) || derate <= 0 || derate > 1) {
    return { ok: false, reason: `${what}: derate must be in (0, 1], got ${String(derate)}` };
  }
  for (const r of list) {
    // small relative slack so 320 V at 0.8 still fits a 400 V part despite rounding
    if (stress <= r * derate * (1 + 1e-12)) return { ok: true, rating: r, usedFraction: stress / r };
  }
  const top = list[list.length - 1] ?? 0;
  return {
    ok: false,
    reason: `${what}: ${String(stress)} ${unitSymbol} exceeds ${String(derate * 100)} % of the largest common rating (${String(top)} ${unitSymbol}); use parts in series/parallel or a special part`,
  };
}

/**
 * Smallest common capacitor voltage rating R with volts ≤ derate × R.
 * Pass the highest voltage the part can ever see: with tubes cold at switch-on,
 * the full unloaded B+ stands on it (common practice, tube amplifier design references, confirmed forum practice).
 */
export function nextCapacitorVoltageRating(volts: number, options: { readonly derate?: number } = {}): RatingResult {
  return nextRating(Math.abs(volts), options.derate ?? 0.8, CAPACITOR_VOLTAGE_RATINGS_VOLTS, 'capacitor voltage', 'V');
}

/** Smallest common resistor wattage W with watts ≤ derate × W. */
export function nextResistorWattage(watts: number, options: { readonly derate?: number } = {}): RatingResult {
  return nextRating(watts, options.derate ?? 0.5, RESISTOR_WATTAGE_RATINGS_WATTS, 'resistor power', 'W');
}
