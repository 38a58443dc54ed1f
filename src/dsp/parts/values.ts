// Parse and format component values the way builders type them.
// Notations: SI prefixes ("470k", "0.1u", "4.7nF"), IEC 60062 RKM codes
// ("4k7", "R47", "2n2"; examples checked against the "RKM code" article, the
// standard text itself not read), plain and exponent numbers ("1e-8").

export type ValueUnit = 'ohms' | 'farads' | 'volts' | 'amperes' | 'watts' | 'hertz';

export type ParseResult = { readonly ok: true; readonly value: number; readonly note?: string } | { readonly ok: false; readonly reason: string };

export interface ParseOptions {
  /** Accept exactly zero (e.g. a 0 V node). Default false. */
  readonly allowZero?: boolean;
  /** Accept negative values (e.g. grid bias volts). Default false. */
  readonly allowNegative?: boolean;
}

export interface FormatOptions {
  readonly style?: 'si' | 'rkm';
  /** Significant digits, 1..6. Default 3. Trailing zeros are dropped. */
  readonly digits?: number;
  /** Append the unit symbol (Ω, F, V, A, W, Hz). Default false. */
  readonly withUnit?: boolean;
  /** Write "u" instead of "µ". Default false. */
  readonly ascii?: boolean;
}

interface UnitInfo {
  readonly noun: string; // "resistance"
  readonly symbol: string; // for formatting
  readonly rkmLetter: string | null; // unit letter used as RKM decimal marker
  readonly minAbs: number;
  readonly maxAbs: number;
  readonly rangeText: string;
}

// Sane ranges: project choices (resistor and capacitor ranges from the brief).
const UNITS: Readonly<Record<ValueUnit, UnitInfo>> = {
  ohms: { noun: 'resistance', symbol: 'Ω', rkmLetter: 'R', minAbs: 0.01, maxAbs: 1e12, rangeText: '0.01 Ω to 1 TΩ' },
  farads: { noun: 'capacitance', symbol: 'F', rkmLetter: 'F', minAbs: 1e-15, maxAbs: 10, rangeText: '1 fF to 10 F' },
  volts: { noun: 'voltage', symbol: 'V', rkmLetter: 'V', minAbs: 1e-6, maxAbs: 1e5, rangeText: '1 µV to 100 kV' },
  amperes: { noun: 'current', symbol: 'A', rkmLetter: 'A', minAbs: 1e-12, maxAbs: 100, rangeText: '1 pA to 100 A' },
  watts: { noun: 'power', symbol: 'W', rkmLetter: 'W', minAbs: 1e-6, maxAbs: 1e4, rangeText: '1 µW to 10 kW' },
  hertz: { noun: 'frequency', symbol: 'Hz', rkmLetter: null, minAbs: 1e-3, maxAbs: 1e8, rangeText: '1 mHz to 100 MHz' },
};

/** SI prefixes plus builders' habits: K = kilo, U/u = micro, N = nano. */
const PREFIXES: Readonly<Record<string, number>> = {
  f: 1e-15,
  p: 1e-12,
  P: 1e-12, // SI "P" is peta, meaningless for these parts: read as pico with a note
  n: 1e-9,
  N: 1e-9,
  u: 1e-6,
  U: 1e-6,
  '\u00B5': 1e-6, // micro sign
  '\u03BC': 1e-6, // Greek small mu
  m: 1e-3,
  k: 1e3,
  K: 1e3,
  M: 1e6,
  G: 1e9,
  T: 1e12,
};

/** Which unit a suffix names, or null. Case rules: see comments. */
function unitOfSuffix(s: string): ValueUnit | null {
  if (s === '\u03A9' || s === '\u2126' || /^ohms?$/i.test(s) || /^r$/i.test(s)) return 'ohms';
  if (/^f$/i.test(s)) return 'farads';
  if (/^v(dc|ac|rms)?$/i.test(s)) return 'volts';
  if (/^(a|amps?)$/i.test(s)) return 'amperes';
  if (/^w$/i.test(s)) return 'watts';
  if (/^hz$/i.test(s)) return 'hertz';
  return null;
}

interface Suffix {
  readonly multiplier: number;
  readonly unit: ValueUnit | null;
  readonly prefix: string;
}

/** Split a suffix into prefix and unit; null when it is not one. */
function splitSuffix(s: string): Suffix | null {
  if (s === '') return { multiplier: 1, unit: null, prefix: '' };
  const direct = unitOfSuffix(s);
  if (direct !== null) return { multiplier: 1, unit: direct, prefix: '' };
  const meg = /^meg(.*)$/i.exec(s); // SPICE-style mega
  if (meg !== null) {
    const rest = meg[1] ?? '';
    const u = rest === '' ? null : unitOfSuffix(rest);
    if (rest !== '' && u === null) return null;
    return { multiplier: 1e6, unit: u, prefix: 'meg' };
  }
  const p = Array.from(s)[0] ?? '';
  const mult = PREFIXES[p];
  if (mult === undefined) return null;
  const rest = s.slice(p.length);
  if (rest === '') return { multiplier: mult, unit: null, prefix: p };
  const u = unitOfSuffix(rest);
  if (u === null) return null;
  return { multiplier: mult, unit: u, prefix: p };
}

function fail(reason: string): ParseResult {
  return { ok: false, reason };
}

/**
 * Parse a component value typed by a builder. Never throws.
 * For ohms "M" is mega and "m" is milli (a note says so when "m" is used).
 * A lone "f" after a number is refused for farads (femto or farad?).
 */
export function parseValue(text: string, unit: ValueUnit, options: ParseOptions = {}): ParseResult {
  const info = UNITS[unit];
  const t = text.trim();
  const quoted = JSON.stringify(t);
  if (t === '') return fail(`empty ${info.noun}: type a value such as ${example(unit)}`);
  if (/^[+-]?(nan|inf(inity)?)/i.test(t)) return fail(`${quoted} is not a number`);
  if (t.includes(',')) return fail(`${quoted}: use "." as the decimal point or an RKM code such as 4k7 (no commas)`);

  let sign = 1;
  let body = t;
  if (body.startsWith('-') || body.startsWith('+')) {
    sign = body.startsWith('-') ? -1 : 1;
    body = body.slice(1).trimStart();
  }

  let magnitude: number | null = null;
  let suffix: Suffix | null = null;
  let rkmMarker = '';

  // RKM: digits, one marker letter in place of the decimal point, digits, optional unit.
  const rkm = /^(\d*)([RrKkMGTpPnNuU\u00B5\u03BCmFVAW])(\d+)\s*(\S*)$/u.exec(body);
  if (rkm !== null) {
    const left = rkm[1] ?? '';
    const marker = rkm[2] ?? '';
    const right = rkm[3] ?? '';
    const tail = rkm[4] ?? '';
    const digits = Number(`${left === '' ? '0' : left}.${right}`);
    const markerUnit = unitOfSuffix(marker);
    const markerMult = markerUnit !== null ? 1 : PREFIXES[marker];
    const tailUnit = tail === '' ? null : unitOfSuffix(tail);
    if (markerMult !== undefined && (tail === '' || tailUnit !== null)) {
      if (markerUnit !== null && tailUnit !== null && markerUnit !== tailUnit) {
        return fail(`${quoted} mixes two units`);
      }
      magnitude = digits * markerMult;
      suffix = { multiplier: markerMult, unit: markerUnit ?? tailUnit, prefix: markerUnit !== null ? '' : marker };
      rkmMarker = marker;
    }
  }

  if (magnitude === null) {
    const plain = /^(\d+(?:\.\d*)?|\.\d+)(?:[eE]([+-]?\d+))?\s*(.*)$/u.exec(body);
    if (plain === null) return fail(`${quoted} is not a value: try ${example(unit)}`);
    const num = Number(`${plain[1] ?? ''}${plain[2] !== undefined ? `e${plain[2]}` : ''}`);
    const tail = plain[3] ?? '';
    if (tail === 'f' && unit === 'farads') {
      return fail(`${quoted} is ambiguous: "f" could be femto or farads; write "${plain[1]}fF" or "${plain[1]}F"`);
    }
    suffix = splitSuffix(tail);
    if (suffix === null) return fail(`${quoted} is not a value: "${tail}" is not a known prefix or unit`);
    magnitude = num * suffix.multiplier;
  }
  if (suffix === null) return fail(`${quoted} is not a value`);

  if (suffix.unit !== null && suffix.unit !== unit) {
    const other = UNITS[suffix.unit];
    return fail(`${quoted} is a ${other.noun} (${suffix.unit}), but a ${info.noun} in ${unit} is expected`);
  }
  if (!Number.isFinite(magnitude)) return fail(`${quoted} is not a finite number`);

  const usedPrefix = suffix.prefix !== '' ? suffix.prefix : rkmMarker;
  const value = sign * magnitude;
  const hint = prefixHint(unit, usedPrefix);

  if (value === 0) {
    if (options.allowZero === true) return { ok: true, value: 0 };
    return fail(`${quoted}: a ${info.noun} of zero is not allowed here`);
  }
  if (value < 0 && options.allowNegative !== true) {
    return fail(`${quoted}: a negative ${info.noun} is not allowed here`);
  }
  if (magnitude < info.minAbs || magnitude > info.maxAbs) {
    return fail(`${quoted} is outside the sane ${info.noun} range ${info.rangeText}${hint !== '' ? `; ${hint}` : ''}`);
  }
  if (hint !== '') return { ok: true, value, note: hint };
  return { ok: true, value };
}

function prefixHint(unit: ValueUnit, prefix: string): string {
  if (prefix === 'm' && unit === 'ohms') return '"m" was read as milli; write "M" or "meg" for mega';
  if (prefix === 'M' && unit !== 'ohms' && unit !== 'hertz') return '"M" was read as mega; write "m" for milli';
  if (prefix === 'P') return '"P" was read as pico (SI peta makes no sense here)';
  return '';
}

function example(unit: ValueUnit): string {
  switch (unit) {
    case 'ohms':
      return '"470k" or "4k7"';
    case 'farads':
      return '"22n" or "0.1uF"';
    case 'volts':
      return '"250" or "6.3V"';
    case 'amperes':
      return '"1.2mA"';
    case 'watts':
      return '"0.5W"';
    case 'hertz':
      return '"1kHz"';
  }
}

// ----------------------------------------------------------------- format

const FORMAT_PREFIXES: readonly { readonly exp: number; readonly si: string }[] = [
  { exp: 12, si: 'T' },
  { exp: 9, si: 'G' },
  { exp: 6, si: 'M' },
  { exp: 3, si: 'k' },
  { exp: 0, si: '' },
  { exp: -3, si: 'm' },
  { exp: -6, si: '\u00B5' },
  { exp: -9, si: 'n' },
  { exp: -12, si: 'p' },
  { exp: -15, si: 'f' },
];

function trimNumber(s: string): string {
  return s.includes('.') ? s.replace(/0+$/, '').replace(/\.$/, '') : s;
}

/**
 * Format a value: SI ("470k", "4.7n") or RKM ("4k7", "R47", "2n2").
 * Ohms never use the milli prefix (values under 1 Ω print as "0.47" / "R47").
 * Throws RangeError for NaN or infinite input.
 */
export function formatValue(value: number, unit: ValueUnit, options: FormatOptions = {}): string {
  if (!Number.isFinite(value)) throw new RangeError(`formatValue: ${String(value)} is not a finite ${unit} value`);
  const digits = options.digits ?? 3;
  if (!Number.isInteger(digits) || digits < 1 || digits > 6) {
    throw new RangeError(`formatValue: digits must be an integer 1..6, got ${String(digits)}`);
  }
  const info = UNITS[unit];
  const unitText = options.withUnit === true ? info.symbol : '';
  if (value === 0) return `0${unitText}`;
  if (value < 0) return `-${formatValue(-value, unit, options)}`;

  const rounded = Number(value.toPrecision(digits));
  const minExp = unit === 'ohms' ? 0 : -15;
  let chosen = FORMAT_PREFIXES[FORMAT_PREFIXES.length - 1] ?? { exp: -15, si: 'f' };
  for (const p of FORMAT_PREFIXES) {
    if (p.exp < minExp) break;
    chosen = p;
    if (rounded >= 10 ** p.exp * (1 - 1e-12)) break;
  }
  const mantissa = rounded / 10 ** chosen.exp;
  const mText = trimNumber(Number(mantissa.toPrecision(digits)).toFixed(Math.max(0, digits - 1)));
  const prefix = options.ascii === true && chosen.si === '\u00B5' ? 'u' : chosen.si;
  const style = options.style ?? 'si';

  if (style === 'si' || (prefix === '' && info.rkmLetter === null)) {
    return `${mText}${prefix}${unitText}`;
  }
  // RKM: the prefix letter (or the unit letter when there is none) replaces the point.
  const marker = prefix !== '' ? prefix : (info.rkmLetter ?? '');
  const [intPart = '0', fracPart = ''] = mText.split('.');
  const lead = intPart === '0' && fracPart !== '' ? '' : intPart;
  return `${lead}${marker}${fracPart}${unit === 'ohms' ? '' : unitText}`;
}
