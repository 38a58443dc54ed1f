// Preferred-number series of IEC 60063:2015.
// E12 and E24 tables as printed in the standard (
// confirmed); eight E24 values differ from 10^(n/24) rounding, so tables are used.
// E6 (every second E12 value, ±20 %): KiCad pcb_calculator help, which cites IEC 60063.
// E96 (±1 %): several independent public tables agree and all 96 equal
// 10^(n/96) rounded to three figures; the standard's own text was not read.

export type ESeries = 'E6' | 'E12' | 'E24' | 'E96';

/** Mantissas as integers (E6..E24 ×10, E96 ×100) so values build exactly. */
interface SeriesTable {
  readonly scale: number;
  readonly mantissas: readonly number[];
  readonly tolerance: number;
}

const E12_INT = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82] as const;

const TABLES: Readonly<Record<ESeries, SeriesTable>> = {
  E6: { scale: 10, mantissas: E12_INT.filter((_, i) => i % 2 === 0), tolerance: 0.2 },
  E12: { scale: 10, mantissas: E12_INT, tolerance: 0.1 },
  E24: {
    scale: 10,
    mantissas: [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91],
    tolerance: 0.05,
  },
  E96: {
    scale: 100,
    mantissas: [
      100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143, 147, 150, 154, 158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205,
      210, 215, 221, 226, 232, 237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309, 316, 324, 332, 340, 348, 357, 365, 374, 383, 392, 402, 412, 422, 432,
      442, 453, 464, 475, 487, 499, 511, 523, 536, 549, 562, 576, 590, 604, 619, 634, 649, 665, 681, 698, 715, 732, 750, 768, 787, 806, 825, 845, 866, 887, 909,
      931, 953, 976,
    ],
    tolerance: 0.01,
  },
};

const SERIES_NAMES: readonly ESeries[] = ['E6', 'E12', 'E24', 'E96'];

function checkSeries(series: string): SeriesTable {
  const t = (TABLES as Readonly<Record<string, SeriesTable>>)[series];
  if (t === undefined) throw new RangeError(`unknown E series "${series}" (use ${SERIES_NAMES.join(', ')})`);
  return t;
}

/** The decade 1 ≤ m < 10 of a series, e.g. E12 → [1, 1.2, ..., 8.2]. */
export function seriesMantissas(series: ESeries): readonly number[] {
  const t = checkSeries(series);
  return t.mantissas.map((m) => m / t.scale);
}

/** Fractional tolerance conventionally paired with a series (E12 0.1, E24 0.05). */
export function seriesTolerance(series: ESeries): number {
  return checkSeries(series).tolerance;
}

/** m × 10^exp built from integers so 47 × 10^-10 gives the double nearest 4.7e-9. */
function build(mantissaInt: number, exp: number): number {
  return exp >= 0 ? mantissaInt * 10 ** exp : mantissaInt / 10 ** -exp;
}

export interface SnapResult {
  /** Nearest series value in log distance (ties go to the lower value). */
  readonly value: number;
  /** snapped / requested − 1 (e.g. +0.044 for 4.5k → 4.7k). */
  readonly errorFraction: number;
  /** Tolerance of the series, fraction. */
  readonly tolerance: number;
}

/** Nearest preferred value in log distance. Throws RangeError for value ≤ 0 or non-finite. */
export function snapToSeries(value: number, series: ESeries): SnapResult {
  const t = checkSeries(series);
  if (!Number.isFinite(value) || value <= 0) {
    throw new RangeError(`snapToSeries: value must be a positive finite number, got ${String(value)}`);
  }
  const digitsExp = Math.round(Math.log10(t.scale)); // 1 for E6..E24, 2 for E96
  let decade = Math.floor(Math.log10(value));
  // guard float error at exact decade edges (e.g. log10(1000) = 2.9999999999999996)
  if (build(1, decade + 1) <= value) decade += 1;
  if (build(1, decade) > value) decade -= 1;
  let best = value;
  let bestDist = Number.POSITIVE_INFINITY;
  const candidates = [...t.mantissas, t.scale * 10];
  for (const m of candidates) {
    const v = build(m, decade - digitsExp);
    const dist = Math.abs(Math.log(v / value));
    if (dist < bestDist - 1e-12) {
      bestDist = dist;
      best = v;
    }
  }
  if (best === build(t.scale * 10, decade - digitsExp)) best = build(t.mantissas[0] ?? t.scale, decade + 1 - digitsExp);
  return { value: best, errorFraction: best / value - 1, tolerance: t.tolerance };
}

/** All series values v with min ≤ v ≤ max (ascending). Throws RangeError on bad bounds. */
export function seriesValuesBetween(min: number, max: number, series: ESeries): readonly number[] {
  const t = checkSeries(series);
  if (!Number.isFinite(min) || !Number.isFinite(max) || min <= 0 || max < min) {
    throw new RangeError(`seriesValuesBetween: need 0 < min ≤ max, got min ${String(min)}, max ${String(max)}`);
  }
  if (max / min > 1e30) throw new RangeError('seriesValuesBetween: range spans more than 30 decades');
  const digitsExp = Math.round(Math.log10(t.scale));
  const out: number[] = [];
  const eps = 1e-12;
  for (let d = Math.floor(Math.log10(min)) - 1; d <= Math.floor(Math.log10(max)) + 1; d++) {
    for (const m of t.mantissas) {
      const v = build(m, d - digitsExp);
      if (v >= min * (1 - eps) && v <= max * (1 + eps)) out.push(v);
    }
  }
  return out;
}
