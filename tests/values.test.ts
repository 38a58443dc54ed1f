import { describe, expect, it } from 'vitest';
import { formatValue, parseValue, type ParseResult, type ValueUnit } from '../src/dsp/parts/values.ts';

function valueOf(r: ParseResult): number {
  if (!r.ok) throw new Error(`expected ok, got: ${r.reason}`);
  return r.value;
}
function reasonOf(r: ParseResult): string {
  if (r.ok) throw new Error(`expected refusal, got value ${String(r.value)}`);
  return r.reason;
}
function near(a: number, b: number): void {
  expect(Math.abs(a - b)).toBeLessThanOrEqual(Math.abs(b) * 1e-12);
}

describe('parseValue: SI prefixes (SI Brochure prefix values, common practice for builders)', () => {
  const cases: readonly (readonly [string, ValueUnit, number])[] = [
    ['470k', 'ohms', 470e3],
    ['470K', 'ohms', 470e3], // builders' capital K, common practice
    ['1M', 'ohms', 1e6],
    ['1meg', 'ohms', 1e6], // SPICE-style "meg"
    ['100m', 'ohms', 0.1], // "m" is milli for ohms too
    ['0.1u', 'farads', 0.1e-6],
    ['0.1\u00B5', 'farads', 0.1e-6], // micro sign
    ['0.1\u03BCF', 'farads', 0.1e-6], // Greek mu
    ['4.7n', 'farads', 4.7e-9],
    ['100p', 'farads', 100e-12],
    ['22uf', 'farads', 22e-6], // lower-case unit after a prefix, common practice
    ['1mF', 'farads', 1e-3],
    ['1.2mA', 'amperes', 1.2e-3],
    ['6.3V', 'volts', 6.3],
    ['250 Vac', 'volts', 250],
    ['0.5W', 'watts', 0.5],
    ['1kHz', 'hertz', 1e3],
    ['470 k', 'ohms', 470e3],
    ['470k\u03A9', 'ohms', 470e3],
    ['470k\u2126', 'ohms', 470e3], // OHM SIGN code point
    ['1.5 Mohm', 'ohms', 1.5e6],
    ['100R', 'ohms', 100], // RKM "470R" form (RKM code article examples)
  ];
  for (const [text, unit, expected] of cases) {
    it(`${text} (${unit}) = ${String(expected)}`, () => near(valueOf(parseValue(text, unit)), expected));
  }

  it('notes that "m" on a resistance is milli', () => {
    const r = parseValue('470m', 'ohms');
    expect(r.ok).toBe(true);
    if (r.ok) expect(r.note).toMatch(/milli/);
  });
});

describe('parseValue: IEC 60062 RKM codes (examples from the "RKM code" article quoting IEC 60062; standard text not read)', () => {
  const cases: readonly (readonly [string, ValueUnit, number])[] = [
    ['R47', 'ohms', 0.47],
    ['4R7', 'ohms', 4.7],
    ['0R1', 'ohms', 0.1],
    ['4K7', 'ohms', 4.7e3],
    ['4k7', 'ohms', 4.7e3],
    ['47K3', 'ohms', 47.3e3],
    ['4M7', 'ohms', 4.7e6],
    ['1M5', 'ohms', 1.5e6],
    ['2n2', 'farads', 2.2e-9],
    ['4n7', 'farads', 4.7e-9], // capacitor example, secondary page on RKM code
    ['1\u00B50', 'farads', 1e-6],
    ['4u7', 'farads', 4.7e-6],
    ['4k7\u03A9', 'ohms', 4.7e3],
    ['4V7', 'volts', 4.7], // zener marking, common practice
  ];
  for (const [text, unit, expected] of cases) {
    it(`${text} (${unit}) = ${String(expected)}`, () => near(valueOf(parseValue(text, unit)), expected));
  }
});

describe('parseValue: plain and exponent numbers', () => {
  it('reads 1e-8, 2.2E-9F, .47 and 330', () => {
    near(valueOf(parseValue('1e-8', 'farads')), 1e-8);
    near(valueOf(parseValue('2.2E-9F', 'farads')), 2.2e-9);
    near(valueOf(parseValue('.47', 'ohms')), 0.47);
    near(valueOf(parseValue('330', 'volts')), 330);
  });
  it('accepts zero and negatives only when asked', () => {
    expect(reasonOf(parseValue('0', 'volts'))).toMatch(/zero/);
    expect(valueOf(parseValue('0', 'volts', { allowZero: true }))).toBe(0);
    expect(reasonOf(parseValue('-2', 'volts'))).toMatch(/negative/);
    // grid bias, e.g. -2 V for a 12AX7 (RCA/Sylvania 12AX7 and Philips EF86 data sheets data sheet row)
    expect(valueOf(parseValue('-2V', 'volts', { allowNegative: true }))).toBe(-2);
  });
});

describe('parseValue: refusals give one-line reasons', () => {
  it('refuses a wrong unit: 4.7nF given for a resistor', () => {
    const reason = reasonOf(parseValue('4.7nF', 'ohms'));
    expect(reason).toMatch(/farads/);
    expect(reason).toMatch(/ohms/);
    expect(reasonOf(parseValue('4R7', 'farads'))).toMatch(/ohms/);
    expect(reasonOf(parseValue('10k\u03A9', 'farads'))).toMatch(/resistance/);
  });
  it('refuses empty, NaN, Infinity, junk and commas', () => {
    expect(reasonOf(parseValue('', 'ohms'))).toMatch(/empty/);
    expect(reasonOf(parseValue('   ', 'ohms'))).toMatch(/empty/);
    expect(reasonOf(parseValue('NaN', 'ohms'))).toMatch(/not a number/);
    expect(reasonOf(parseValue('Infinity', 'ohms'))).toMatch(/not a number/);
    expect(reasonOf(parseValue('abc', 'ohms'))).toMatch(/not a value/);
    expect(reasonOf(parseValue('4k7k', 'ohms'))).toMatch(/not a value/);
    expect(reasonOf(parseValue('1.2.3', 'ohms'))).toMatch(/not a value/);
    expect(reasonOf(parseValue('4,7k', 'ohms'))).toMatch(/decimal point/);
  });
  it('refuses absurd values and states the range', () => {
    const tiny = reasonOf(parseValue('1m', 'ohms')); // 1 mΩ, below 0.01 Ω
    expect(tiny).toMatch(/0\.01 Ω to 1 TΩ/);
    expect(tiny).toMatch(/milli/); // ambiguity hint: M vs m
    expect(reasonOf(parseValue('2T', 'ohms'))).toMatch(/range/);
    expect(reasonOf(parseValue('100F', 'farads'))).toMatch(/1 fF to 10 F/);
    expect(reasonOf(parseValue('1M', 'farads'))).toMatch(/mega/);
    expect(reasonOf(parseValue('0.1fF', 'farads'))).toMatch(/range/);
  });
  it('refuses a lone "f" for farads as ambiguous (femto or farad)', () => {
    expect(reasonOf(parseValue('1f', 'farads'))).toMatch(/ambiguous/);
    near(valueOf(parseValue('1F', 'farads')), 1);
    near(valueOf(parseValue('10fF', 'farads')), 10e-15);
  });
  it('every reason is one line', () => {
    for (const t of ['', 'x', '4.7nF', '1m', '-1', '0', '1f', '4,7']) {
      const r = parseValue(t, t === '1f' ? 'farads' : 'ohms');
      if (!r.ok) expect(r.reason).not.toMatch(/\n/);
    }
  });
});

describe('formatValue', () => {
  it('SI style', () => {
    expect(formatValue(470e3, 'ohms')).toBe('470k');
    expect(formatValue(4.7e-9, 'farads')).toBe('4.7n');
    expect(formatValue(100e-12, 'farads')).toBe('100p');
    expect(formatValue(0.1e-6, 'farads')).toBe('100n');
    expect(formatValue(1.5e6, 'ohms')).toBe('1.5M');
    expect(formatValue(0.47, 'ohms')).toBe('0.47'); // no milli for ohms (m/M confusion)
    expect(formatValue(22e-6, 'farads', { withUnit: true })).toBe('22\u00B5F');
    expect(formatValue(22e-6, 'farads', { ascii: true })).toBe('22u');
    expect(formatValue(999.6, 'ohms')).toBe('1k'); // rounds up across a prefix
    expect(formatValue(1234.5, 'ohms', { digits: 2 })).toBe('1.2k');
  });
  it('RKM style matches the IEC 60062 examples (RKM code article)', () => {
    expect(formatValue(4.7e3, 'ohms', { style: 'rkm' })).toBe('4k7');
    expect(formatValue(0.47, 'ohms', { style: 'rkm' })).toBe('R47');
    expect(formatValue(4.7, 'ohms', { style: 'rkm' })).toBe('4R7');
    expect(formatValue(470, 'ohms', { style: 'rkm' })).toBe('470R');
    expect(formatValue(47.3e3, 'ohms', { style: 'rkm' })).toBe('47k3');
    expect(formatValue(4.7e6, 'ohms', { style: 'rkm' })).toBe('4M7');
    expect(formatValue(2.2e-9, 'farads', { style: 'rkm' })).toBe('2n2');
  });
  it('round-trips through parseValue for E12 values over many decades', () => {
    const e12 = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2]; // IEC 60063, IEC 60063:2015
    for (let d = 0; d <= 7; d++) {
      for (const m of e12) {
        const v = m * 10 ** d;
        for (const style of ['si', 'rkm'] as const) {
          const text = formatValue(v, 'ohms', { style });
          expect(valueOf(parseValue(text, 'ohms')) / v).toBeCloseTo(1, 12);
        }
      }
    }
  });
  it('refuses non-finite input', () => {
    expect(() => formatValue(Number.NaN, 'ohms')).toThrow(/not a finite/);
  });
});
