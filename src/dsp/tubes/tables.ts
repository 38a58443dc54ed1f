// Table-based tube functions: the live path's tube laws (circuit/plan.ts LIVE_TUBE_FUNCTIONS);
// offline renders, `render --raw` and the reference tests keep the exact equations of models.ts.
// Each tube law is split into one-dimensional factors, each tabulated with its exact derivative
// and read back by cubic Hermite interpolation (value and slope at every node are exact, the
// interpolant is C1, so Newton sees a consistent derivative). Hermite error bound
// h⁴/384·max|f''''| (common practice; e.g. de Boor, "A practical guide to splines", from memory).
//   triode  Ip = scale·W(Vpk)·G(z),  W(x) = 2/kg1·(x/kp)^ex,  G(z) = softplus(z)^ex,
//           z = kp·(1/mu + Vgk/sqrt(kvb + Vpk²))
//   pentode Ip = scale·W(Vsk)·G(z)·A(Vpk), z = kp·(1/mu + Vgk/Vsk), A(x) = atan(x/kvb)
//           Is = scale·S(Vgk + Vsk/mu), S(b) = b^ex/kg2
//   grid    Ig = D(Vgk) (Dempwolf-Zolzer)
// Outside a table's range the device falls back to the exact equations.
// Accuracy is measured in tests/engine-perf-correctness.test.ts (currents within 1e-6 relative
// + 1 nA; template outputs -150 dB from the exact engine). Measured cost per device evaluation:
// pentode 233 → 76 ns, triode 217 → 63 ns.
import type { GridCurrentParams, KorenPentodeParams, KorenTriodeParams } from './models.ts';
import { dempwolfZolzerGridInto, softplus, logistic } from './models.ts';

/** Cubic Hermite table on a uniform grid; per interval the polynomial c0 + c1 t + c2 t² + c3 t³, t ∈ [0, 1]. */
export class HermiteTable {
  readonly x0: number;
  readonly x1: number;
  readonly invH: number;
  readonly intervals: number;
  private readonly c: Float64Array;

  /** f and its derivative df on [x0, x1] with `intervals` equal steps (or `coefficients` of toData()). */
  constructor(f: ((x: number) => number) | null, df: ((x: number) => number) | null, x0: number, x1: number, intervals: number, coefficients?: Float64Array) {
    if (!(x1 > x0) || !(intervals >= 1)) throw new Error(`table range [${x0}, ${x1}] with ${intervals} intervals is empty`);
    this.x0 = x0;
    this.x1 = x1;
    this.intervals = intervals;
    const h = (x1 - x0) / intervals;
    this.invH = 1 / h;
    if (coefficients) {
      if (coefficients.length !== 4 * intervals) throw new Error(`table data has ${coefficients.length} coefficients, ${4 * intervals} expected`);
      this.c = coefficients;
      return;
    }
    if (!f || !df) throw new Error('a table needs its function and derivative');
    this.c = new Float64Array(4 * intervals);
    let fa = f(x0),
      ma = df(x0) * h;
    for (let k = 0; k < intervals; k++) {
      const xb = k + 1 === intervals ? x1 : x0 + (k + 1) * h;
      const fb = f(xb),
        mb = df(xb) * h;
      this.c[4 * k] = fa;
      this.c[4 * k + 1] = ma;
      this.c[4 * k + 2] = 3 * (fb - fa) - 2 * ma - mb;
      this.c[4 * k + 3] = 2 * (fa - fb) + ma + mb;
      fa = fb;
      ma = mb;
    }
  }

  /** The table as plain data (a copy of its coefficients), for another thread. */
  toData(key: string): TableData {
    return { key, x0: this.x0, x1: this.x1, intervals: this.intervals, coefficients: this.c.slice() };
  }

  /** Value at x into out[o], slope into out[o+1]; false (nothing written) outside [x0, x1]. */
  lookup(x: number, out: Float64Array, o: number): boolean {
    const buf = this.arg;
    buf[0] = x;
    return this.lookupFrom(buf, 0, out, o);
  }

  private readonly arg = new Float64Array(1);

  /**
   * lookup() of x = src[si]: the audio path's form (no double crosses a call: V8 boxes a double
   * argument of a call it does not inline; measured, 360 minor collections in 4000 blocks).
   */
  lookupFrom(src: Float64Array, si: number, out: Float64Array, o: number): boolean {
    const s = (src[si]! - this.x0) * this.invH;
    if (!(s >= 0 && s <= this.intervals)) return false;
    let k = s | 0;
    if (k === this.intervals) k--;
    const t = s - k,
      c = this.c,
      b = 4 * k;
    const c1 = c[b + 1]!,
      c2 = c[b + 2]!,
      c3 = c[b + 3]!;
    out[o] = ((c3 * t + c2) * t + c1) * t + c[b]!;
    out[o + 1] = ((3 * c3 * t + 2 * c2) * t + c1) * this.invH;
    return true;
  }
}

/** A table as plain data (HermiteTable.toData): a plan carries the tables its tubes use. */
export interface TableData {
  readonly key: string;
  readonly x0: number;
  readonly x1: number;
  readonly intervals: number;
  readonly coefficients: Float64Array;
}

/** Tables built or looked up while a recorder is set (recordTables). */
let recorder: Set<string> | null = null;

/** The cached table under `key`, built by `make` the first time. */
function cached(key: string, make: () => HermiteTable): HermiteTable {
  recorder?.add(key);
  let t = cache.get(key);
  if (!t) {
    t = make();
    cache.set(key, t);
  }
  return t;
}

/** Run `fn` and return the keys of every table it used (to ship them with a plan). */
export function recordTables<T>(fn: () => T): { result: T; keys: string[] } {
  const outer = recorder;
  const keys = new Set<string>();
  recorder = keys;
  try {
    return { result: fn(), keys: [...keys] };
  } finally {
    recorder = outer;
    if (outer) for (const k of keys) outer.add(k);
  }
}

/** Copies of the cached tables under `keys`. */
export function exportTables(keys: readonly string[]): TableData[] {
  return keys.flatMap((k) => {
    const t = cache.get(k);
    return t ? [t.toData(k)] : [];
  });
}

/** Put tables built elsewhere into this thread's cache (no function evaluation; existing keys are kept). */
export function importTables(data: readonly TableData[]): void {
  for (const d of data) if (!cache.has(d.key)) cache.set(d.key, new HermiteTable(null, null, d.x0, d.x1, d.intervals, d.coefficients));
}

/**
 * A one-dimensional law in the fused calling convention of models.ts: reads its input from
 * x[xo] (and any fixed inputs after it), writes the current to out[o] and its slope to out[o+1].
 */
export type FusedLaw1D = (x: Float64Array, xo: number, out: Float64Array, o: number) => void;

/**
 * Tabulate any one-dimensional law (value and exact slope from the law itself at every node)
 * over [x0, x1]: the generic path, so a new grid-current law is tabulated without code of its
 * own. `key` names the law and its parameters (tables are cached by it).
 */
export function lawTable(key: string, law: FusedLaw1D, x0: number, x1: number, intervals: number): HermiteTable {
  return cached(key, () => {
    const xin = new Float64Array(4),
      out = new Float64Array(2);
    const at = (v: number, k: 0 | 1): number => {
      xin[0] = v;
      law(xin, 0, out, 0);
      return out[k]!;
    };
    return new HermiteTable(
      (v) => at(v, 0),
      (v) => at(v, 1),
      x0,
      x1,
      intervals,
    );
  });
}

/** x^y and its derivative for x ≥ 0 (0 at 0 for y > 1). */
function powFn(y: number, k: number): [(x: number) => number, (x: number) => number] {
  return [(x) => (x > 0 ? k * Math.exp(y * Math.log(x)) : 0), (x) => (x > 0 ? k * y * Math.exp((y - 1) * Math.log(x)) : 0)];
}

/** G(z) = softplus(z)^ex and its derivative. */
function softplusPow(ex: number): [(z: number) => number, (z: number) => number] {
  return [
    (z) => Math.exp(ex * Math.log(softplus(z))),
    (z) => {
      const sp = softplus(z);
      return ex * Math.exp((ex - 1) * Math.log(sp)) * logistic(z);
    },
  ];
}

/** Plate and screen voltage range covered by the tables, volts (beyond: exact equations). */
export const TABLE_MAX_VOLTS = 1024;
// x^ex is not smooth at 0 (f'''' ~ x^(ex-4)), so the power-law factors start above 0 and the
// exact equations are used below: W from 4 V (Hermite bound 0.54·h⁴/384·x⁻⁴ ≈ 2e-8 relative
// there, h = 1/4 V), S from 1 V (h = 1/16 V). Starting S at 0 gave ~5e-8 A absolute screen error
// near cut-off, i.e. 0.1 V through a 2.2 MΩ screen feed (measured: -72 dB vs the exact engine).
const W_FROM_VOLTS = 4;
const S_FROM_VOLTS = 1;
const Z_RANGE = 60;

export interface TriodeTables {
  readonly w: HermiteTable;
  readonly g: HermiteTable;
}
export interface PentodeTables extends TriodeTables {
  readonly a: HermiteTable;
  readonly s: HermiteTable;
}

const cache = new Map<string, HermiteTable>();

/** W(x) = 2/kg1·(x/kp)^ex and G(z) = softplus(z)^ex, shared by the triode and the pentode. */
function wgTables(p: KorenTriodeParams): TriodeTables {
  const w = cached(`w:${p.ex},${p.kg1},${p.kp}`, () => {
    const [f, df] = powFn(p.ex, (2 / p.kg1) * Math.exp(-p.ex * Math.log(p.kp)));
    return new HermiteTable(f, df, W_FROM_VOLTS, TABLE_MAX_VOLTS, (TABLE_MAX_VOLTS - W_FROM_VOLTS) * 4);
  });
  const g = cached(`sp:${p.ex}`, () => {
    const [f, df] = softplusPow(p.ex);
    return new HermiteTable(f, df, -Z_RANGE, Z_RANGE, Z_RANGE * 64);
  });
  return { w, g };
}

export function triodeTables(p: KorenTriodeParams): TriodeTables {
  return wgTables(p);
}

export function pentodeTables(p: KorenPentodeParams): PentodeTables {
  const a = cached(
    `a:${p.kvb}`,
    () =>
      new HermiteTable(
        (x) => Math.atan(x / p.kvb),
        (x) => 1 / p.kvb / (1 + (x / p.kvb) ** 2),
        0,
        TABLE_MAX_VOLTS,
        TABLE_MAX_VOLTS * 4,
      ),
  );
  const s = cached(`s:${p.ex},${p.kg2}`, () => {
    const [f, df] = powFn(p.ex, 1 / p.kg2);
    return new HermiteTable(f, df, S_FROM_VOLTS, 256, (256 - S_FROM_VOLTS) * 16);
  });
  return { ...wgTables(p), a, s };
}

/** Range of the grid-current tables, Vgk volts (outside: the exact law). */
export const GRID_TABLE_FROM_VOLTS = -12;
export const GRID_TABLE_TO_VOLTS = 6;
const GRID_INTERVALS_PER_VOLT = 128;

/** Any grid-current law (Vgk -> Ig, dIg/dVgk) tabulated over GRID_TABLE_FROM_VOLTS … GRID_TABLE_TO_VOLTS. */
export function gridLawTable(key: string, law: FusedLaw1D): HermiteTable {
  const span = GRID_TABLE_TO_VOLTS - GRID_TABLE_FROM_VOLTS;
  return lawTable(`g:${key}`, law, GRID_TABLE_FROM_VOLTS, GRID_TABLE_TO_VOLTS, span * GRID_INTERVALS_PER_VOLT);
}

/** The netlist-v1 grid law (Dempwolf-Zolzer) through the generic path. */
export function gridTable(p: GridCurrentParams): HermiteTable {
  // dempwolfZolzerGridInto writes [Ig, dIg/dVgk] at out[o], out[o+1] from x[xo] = Vgk
  return gridLawTable(`dz:${p.gg},${p.cg},${p.xi},${p.ig0}`, (x, xo, out, o) => dempwolfZolzerGridInto(p, x, xo, out, o));
}
