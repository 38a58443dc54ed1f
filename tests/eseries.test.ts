import { describe, expect, it } from 'vitest';
import { seriesMantissas, seriesTolerance, seriesValuesBetween, snapToSeries } from '../src/dsp/parts/eseries.ts';

// IEC 60063:2015 tables as given in IEC 60063:2015 (confirmed).
const IEC_E12 = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];
const IEC_E24 = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1];
// E6 ±20 %: KiCad pcb_calculator help text (cites IEC 60063).
const KICAD_E6 = [1.0, 1.5, 2.2, 3.3, 4.7, 6.8];

describe('E-series tables (IEC 60063:2015)', () => {
  it('E12 and E24 equal the standard tables', () => {
    expect(seriesMantissas('E12')).toEqual(IEC_E12);
    expect(seriesMantissas('E24')).toEqual(IEC_E24);
    expect(seriesMantissas('E6')).toEqual(KICAD_E6);
  });

  it('eight E24 values differ from 10^(n/24) rounding (IEC 60063:2015), so the table is not the formula', () => {
    const formula = Array.from({ length: 24 }, (_, n) => Math.round(10 * 10 ** (n / 24)) / 10);
    const differ = seriesMantissas('E24').filter((v, n) => Math.abs(v - (formula[n] ?? 0)) > 1e-9);
    expect(differ).toHaveLength(8);
    expect(differ).toContain(4.7); // formula would give 4.6
  });

  it('E96 has 96 values equal to 10^(n/96) rounded to three figures (secondary tables; from memory that IEC uses this rule)', () => {
    const e96 = seriesMantissas('E96');
    expect(e96).toHaveLength(96);
    e96.forEach((v, n) => expect(v).toBeCloseTo(Math.round(100 * 10 ** (n / 96)) / 100, 12));
  });

  it('tolerances: E12 ±10 %, E24 ±5 % (IEC 60063:2015), E6 ±20 % (KiCad help), E96 ±1 % (secondary)', () => {
    expect(seriesTolerance('E12')).toBe(0.1);
    expect(seriesTolerance('E24')).toBe(0.05);
    expect(seriesTolerance('E6')).toBe(0.2);
    expect(seriesTolerance('E96')).toBe(0.01);
  });
});

describe('snapToSeries (nearest in log distance)', () => {
  it('snaps to table values in several decades', () => {
    expect(snapToSeries(4500, 'E12').value).toBe(4700);
    expect(snapToSeries(50e3, 'E24').value).toBe(51e3);
    expect(snapToSeries(50e3, 'E12').value).toBe(47e3);
    expect(snapToSeries(4.6e-9, 'E24').value).toBe(4.7e-9); // table value, not the formula's 4.6
    expect(snapToSeries(9.6, 'E24').value).toBe(10); // rolls into the next decade
    expect(snapToSeries(1.02e6, 'E12').value).toBe(1e6);
    expect(snapToSeries(1000, 'E12').value).toBe(1000); // exact decade edge
    expect(snapToSeries(2.9e-7, 'E12').value).toBe(2.7e-7);
  });

  it('uses log distance: geometric midpoint of 1.0 and 1.2 splits the decision', () => {
    const mid = Math.sqrt(1.0 * 1.2);
    expect(snapToSeries(mid * 0.999, 'E12').value).toBe(1);
    expect(snapToSeries(mid * 1.001, 'E12').value).toBe(1.2);
    // sqrt(1.0 × 1.2) ≈ 1.095, so 1.1 snaps up to 1.2
    expect(snapToSeries(1.1, 'E12').value).toBe(1.2);
  });

  it('reports the error fraction and the series tolerance', () => {
    const r = snapToSeries(4500, 'E12');
    expect(r.errorFraction).toBeCloseTo(4700 / 4500 - 1, 12);
    expect(r.tolerance).toBe(0.1);
    // any value snaps within half a series step: E12 step is 10^(1/12) ≈ 1.212 (IEC 60063 geometric basis)
    for (let x = 1; x < 10; x *= 1.013) {
      expect(Math.abs(Math.log10(snapToSeries(x, 'E12').value / x))).toBeLessThanOrEqual(0.05);
    }
  });

  it('refuses non-positive and non-finite values', () => {
    expect(() => snapToSeries(0, 'E12')).toThrow(/positive/);
    expect(() => snapToSeries(Number.NaN, 'E24')).toThrow(/positive/);
  });
});

describe('seriesValuesBetween', () => {
  it('lists E12 resistor values from 1k to 10k inclusive', () => {
    expect(seriesValuesBetween(1000, 10e3, 'E12')).toEqual([...IEC_E12.map((m) => Math.round(m * 1000)), 10e3]);
  });
  it('covers several decades with 24 values per decade', () => {
    const v = seriesValuesBetween(1, 1e6, 'E24');
    expect(v).toHaveLength(6 * 24 + 1);
    expect(v).toContain(4.7e3);
    expect(v).toContain(910e3);
    for (let i = 1; i < v.length; i++) expect(v[i]).toBeGreaterThan(v[i - 1] ?? Infinity);
  });
  it('refuses bad bounds', () => {
    expect(() => seriesValuesBetween(10, 1, 'E12')).toThrow(/min/);
    expect(() => seriesValuesBetween(0, 1, 'E12')).toThrow(/min/);
  });
});
