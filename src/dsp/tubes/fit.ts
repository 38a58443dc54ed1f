// Fitting tube model parameters to points read off a data sheet: bounded, log-parameterised
// Levenberg-Marquardt (Levenberg 1944, Marquardt 1963; Madsen, Nielsen & Tingleff, "Methods for
// non-linear least squares problems", 2004, for the damping update) from many seeded starts.
// Residuals are relative current errors, so a 10 uA and a 10 mA point weigh the same.
//   triode:  Koren triode (mu, ex, kg1, kp, kvb) to (Vgk, Vpk, Ip)
//   pentode: Koren pentode (mu, ex, kg1, kg2, kp, kvb) to (Vgk, Vpk, Vsk, Ip) and, where given, Is
//   grid:    initial-velocity law (gg, xi, cathodeKelvin, onsetVolts) to the rows that give Ig
import { compileInitialVelocity, initialVelocityGridInto, type InitialVelocityLaw } from './grid-laws.ts';
import { IV_DEFAULT_GRID } from './library.ts';
import { korenPentodePlate, korenPentodeScreen, korenTriode, newSlopes, type KorenPentodeParams, type KorenTriodeParams } from './models.ts';

export interface FitPoint {
  readonly vgk: number;
  readonly vpk: number;
  readonly vsk?: number;
  /** Plate current, amperes (undefined: the row gives only grid current). */
  readonly ip?: number;
  readonly is?: number;
  readonly ig?: number;
}

/** One parameter of a fit: bounds, and whether it is fitted by its logarithm. */
export interface ParamSpec {
  readonly name: string;
  readonly lo: number;
  readonly hi: number;
  readonly log: boolean;
}

/** Bounds of the Koren parameters (wide: every published set known to the project sits well inside). */
export const TRIODE_SPECS: readonly ParamSpec[] = [
  { name: 'mu', lo: 1, hi: 300, log: true },
  { name: 'ex', lo: 1, hi: 2.5, log: true },
  { name: 'kg1', lo: 1, hi: 1e6, log: true },
  { name: 'kp', lo: 0.1, hi: 5000, log: true },
  { name: 'kvb', lo: 0.01, hi: 1e6, log: true },
];
export const PENTODE_SPECS: readonly ParamSpec[] = [
  { name: 'mu', lo: 1, hi: 300, log: true },
  { name: 'ex', lo: 1, hi: 2.5, log: true },
  { name: 'kg1', lo: 1, hi: 1e7, log: true },
  { name: 'kg2', lo: 1, hi: 1e7, log: true },
  { name: 'kp', lo: 0.1, hi: 5000, log: true },
  { name: 'kvb', lo: 0.01, hi: 1e5, log: true },
];
export const GRID_SPECS: readonly ParamSpec[] = [
  { name: 'gg', lo: 1e-7, hi: 1e-1, log: true },
  { name: 'xi', lo: 1, hi: 2.5, log: true },
  { name: 'cathodeKelvin', lo: 700, hi: 1500, log: true },
  { name: 'onsetVolts', lo: -3, hi: 1, log: false },
];

type Model = (p: Float64Array, out: Float64Array) => void;

/** Deterministic uniform stream (mulberry32), so a fit is reproducible. */
function stream(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

const toInternal = (s: ParamSpec, v: number) => (s.log ? Math.log(v) : v);
const fromInternal = (s: ParamSpec, z: number) => (s.log ? Math.exp(z) : z);
const clampZ = (s: ParamSpec, z: number) => Math.min(toInternal(s, s.hi), Math.max(toInternal(s, s.lo), z));

/** Solve the small dense system a·x = b (Gaussian elimination, partial pivoting); false when singular. */
function solveSmall(a: Float64Array, b: Float64Array, n: number): boolean {
  for (let k = 0; k < n; k++) {
    let p = k;
    for (let i = k + 1; i < n; i++) if (Math.abs(a[i * n + k]!) > Math.abs(a[p * n + k]!)) p = i;
    if (!(Math.abs(a[p * n + k]!) > 1e-300)) return false;
    if (p !== k) {
      for (let j = 0; j < n; j++) {
        const t = a[k * n + j]!;
        a[k * n + j] = a[p * n + j]!;
        a[p * n + j] = t;
      }
      const t = b[k]!;
      b[k] = b[p]!;
      b[p] = t;
    }
    for (let i = k + 1; i < n; i++) {
      const f = a[i * n + k]! / a[k * n + k]!;
      if (f === 0) continue;
      for (let j = k; j < n; j++) a[i * n + j]! -= f * a[k * n + j]!;
      b[i]! -= f * b[k]!;
    }
  }
  for (let k = n - 1; k >= 0; k--) {
    let s = b[k]!;
    for (let j = k + 1; j < n; j++) s -= a[k * n + j]! * b[j]!;
    b[k] = s / a[k * n + k]!;
  }
  return true;
}

export interface LmResult {
  readonly params: Float64Array;
  readonly cost: number;
}

/**
 * Bounded Levenberg-Marquardt on residuals r(p) (m of them) over internal coordinates z (log of
 * the log-fitted parameters), clamped to the bounds. Forward-difference Jacobian in z.
 */
export function levenbergMarquardt(specs: readonly ParamSpec[], start: Float64Array, residuals: Model, m: number, maxIterations = 200): LmResult {
  const n = specs.length;
  const z = Float64Array.from(start, (v, i) => clampZ(specs[i]!, toInternal(specs[i]!, v)));
  const p = new Float64Array(n),
    r = new Float64Array(m),
    rt = new Float64Array(m),
    jac = new Float64Array(m * n);
  const a = new Float64Array(n * n),
    g = new Float64Array(n),
    step = new Float64Array(n),
    zt = new Float64Array(n);
  const cost = (zz: Float64Array, out: Float64Array): number => {
    for (let i = 0; i < n; i++) p[i] = fromInternal(specs[i]!, zz[i]!);
    residuals(p, out);
    let c = 0;
    for (let k = 0; k < m; k++) {
      const x = out[k]!;
      c += x * x;
    }
    return Number.isFinite(c) ? c : Number.POSITIVE_INFINITY;
  };
  let c = cost(z, r);
  let lambda = 1e-3;
  for (let it = 0; it < maxIterations && c > 1e-28; it++) {
    // Jacobian by forward differences in z
    for (let j = 0; j < n; j++) {
      const h = 1e-7 * Math.max(1, Math.abs(z[j]!));
      zt.set(z);
      zt[j] = z[j]! + h;
      cost(zt, rt);
      for (let k = 0; k < m; k++) jac[k * n + j] = (rt[k]! - r[k]!) / h;
    }
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let k = 0; k < m; k++) s += jac[k * n + i]! * r[k]!;
      g[i] = s;
      for (let j = 0; j <= i; j++) {
        let t = 0;
        for (let k = 0; k < m; k++) t += jac[k * n + i]! * jac[k * n + j]!;
        a[i * n + j] = t;
        a[j * n + i] = t;
      }
    }
    let improved = false;
    for (let tries = 0; tries < 12; tries++) {
      const sys = Float64Array.from(a);
      for (let i = 0; i < n; i++) sys[i * n + i]! += lambda * Math.max(a[i * n + i]!, 1e-12);
      for (let i = 0; i < n; i++) step[i] = -g[i]!;
      if (!solveSmall(sys, step, n)) {
        lambda *= 10;
        continue;
      }
      for (let i = 0; i < n; i++) zt[i] = clampZ(specs[i]!, z[i]! + step[i]!);
      const ct = cost(zt, rt);
      if (ct < c) {
        const rel = (c - ct) / c;
        z.set(zt);
        r.set(rt);
        c = ct;
        lambda = Math.max(1e-12, lambda / 3);
        improved = true;
        if (rel < 1e-12) it = maxIterations;
        break;
      }
      lambda *= 4;
    }
    if (!improved) break;
  }
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = fromInternal(specs[i]!, z[i]!);
  return { params: out, cost: c };
}

/** Multi-start: the given starts, then seeded random starts uniform in the (internal) box; the best result. */
export function multiStartFit(
  specs: readonly ParamSpec[],
  starts: readonly Float64Array[],
  randomStarts: number,
  residuals: Model,
  m: number,
  seed = 1,
): LmResult {
  const rnd = stream(seed);
  let best: LmResult | null = null;
  const all = [...starts];
  for (let s = 0; s < randomStarts; s++) {
    all.push(Float64Array.from(specs, (sp) => fromInternal(sp, toInternal(sp, sp.lo) + rnd() * (toInternal(sp, sp.hi) - toInternal(sp, sp.lo)))));
  }
  for (const st of all) {
    const res = levenbergMarquardt(specs, st, residuals, m);
    if (!best || res.cost < best.cost) best = res;
    if (best.cost < 1e-20) break;
  }
  return best!;
}

export class FitError extends Error {
  override name = 'FitError';
}

const rel = (f: number, y: number) => (f - y) / y;

export interface PlateFit<P> {
  readonly model: P;
  readonly fittedIp: readonly number[];
  readonly fittedIs: readonly (number | undefined)[];
}

const triodeOf = (p: Float64Array): KorenTriodeParams => ({ mu: p[0]!, ex: p[1]!, kg1: p[2]!, kp: p[3]!, kvb: p[4]! });
const pentodeOf = (p: Float64Array): KorenPentodeParams => ({ mu: p[0]!, ex: p[1]!, kg1: p[2]!, kg2: p[3]!, kp: p[4]!, kvb: p[5]! });

/** Published sets used as first starts (Koren 1996 12AX7, 12AU7; the EF86 Koren-form fit). */
const TRIODE_STARTS = [
  [100, 1.4, 1060, 600, 300],
  [21.5, 1.3, 1180, 84, 300],
  [60, 1.35, 460, 300, 300],
  [30, 1.3, 330, 320, 300],
];
const PENTODE_STARTS = [
  [34.9, 1.35, 2648.1, 4627, 222.06, 4.7],
  [10, 1.35, 1000, 4000, 50, 20],
];

function plateRows(points: readonly FitPoint[]): FitPoint[] {
  const rows = points.filter((q) => q.ip !== undefined);
  for (const q of rows)
    if (!(q.ip! > 0))
      throw new FitError(`plate current must be positive at every fitted point (Vgk ${q.vgk} V, Vpk ${q.vpk} V: got ${q.ip} A); leave cut-off points out`);
  return rows;
}

/** Fit the Koren triode to points with Ip. */
export function fitTriode(points: readonly FitPoint[], randomStarts = 40): PlateFit<KorenTriodeParams> {
  const rows = plateRows(points);
  if (rows.length < 5) throw new FitError(`a triode fit needs at least 5 points with Ip (got ${rows.length})`);
  const s = newSlopes();
  const res = multiStartFit(
    TRIODE_SPECS,
    TRIODE_STARTS.map((x) => Float64Array.from(x)),
    randomStarts,
    (p, out) => {
      const m = triodeOf(p);
      rows.forEach((q, k) => {
        korenTriode(m, q.vgk, q.vpk, 1, s);
        out[k] = rel(s.amps, q.ip!);
      });
    },
    rows.length,
  );
  const model = triodeOf(res.params);
  return {
    model,
    fittedIp: points.map((q) => {
      korenTriode(model, q.vgk, q.vpk, 1, s);
      return s.amps;
    }),
    fittedIs: points.map(() => undefined),
  };
}

/** Fit the Koren pentode to points with Ip (and Vsk), and Is where given. Without Is points kg2 keeps `kg2Default`. */
export function fitPentode(points: readonly FitPoint[], randomStarts = 40, kg2Default = 4627): PlateFit<KorenPentodeParams> & { readonly kg2Fitted: boolean } {
  const rows = plateRows(points);
  for (const q of points)
    if (!(q.vsk !== undefined && q.vsk > 0)) throw new FitError(`a pentode fit needs a positive Vsk on every row (Vgk ${q.vgk} V, Vpk ${q.vpk} V)`);
  const screenRows = points.filter((q) => q.is !== undefined);
  for (const q of screenRows)
    if (!(q.is! > 0)) throw new FitError(`screen current must be positive where given (Vgk ${q.vgk} V, Vsk ${q.vsk} V: got ${q.is} A)`);
  if (rows.length < 6) throw new FitError(`a pentode fit needs at least 6 points with Ip (got ${rows.length})`);
  const kg2Fitted = screenRows.length > 0;
  const specs = kg2Fitted ? PENTODE_SPECS : PENTODE_SPECS.map((sp) => (sp.name === 'kg2' ? { ...sp, lo: kg2Default, hi: kg2Default } : sp));
  const s = newSlopes();
  const res = multiStartFit(
    specs,
    PENTODE_STARTS.map((x) => Float64Array.from(x, (v, i) => (i === 3 && !kg2Fitted ? kg2Default : v))),
    randomStarts,
    (p, out) => {
      const m = pentodeOf(p);
      rows.forEach((q, k) => {
        korenPentodePlate(m, q.vgk, q.vpk, q.vsk!, 1, s);
        out[k] = rel(s.amps, q.ip!);
      });
      screenRows.forEach((q, k) => {
        korenPentodeScreen(m, q.vgk, q.vsk!, 1, s);
        out[rows.length + k] = rel(s.amps, q.is!);
      });
    },
    rows.length + screenRows.length,
  );
  const model = pentodeOf(res.params);
  return {
    model,
    kg2Fitted,
    fittedIp: points.map((q) => {
      korenPentodePlate(model, q.vgk, q.vpk, q.vsk!, 1, s);
      return s.amps;
    }),
    fittedIs: points.map((q) => {
      if (q.is === undefined) return undefined;
      korenPentodeScreen(model, q.vgk, q.vsk!, 1, s);
      return s.amps;
    }),
  };
}

const ivIn = new Float64Array(1),
  ivOut = new Float64Array(2);
/** The initial-velocity law at Vgk (grid-laws.ts, the one implementation of its equations). */
export function initialVelocityAmps(g: Omit<InitialVelocityLaw, 'name'>, vgk: number): number {
  ivIn[0] = vgk;
  initialVelocityGridInto(compileInitialVelocity(g), ivIn, 0, ivOut, 0);
  return ivOut[0]!;
}

/** Fit the initial-velocity grid law to the rows that give Ig (at least 4, spanning the onset for a meaningful temperature). */
export function fitGridLaw(points: readonly FitPoint[], randomStarts = 30): InitialVelocityLaw {
  const rows = points.filter((q) => q.ig !== undefined);
  if (rows.length < 4) throw new FitError(`a grid-current fit needs at least 4 points with Ig (got ${rows.length})`);
  for (const q of rows) if (!(q.ig! > 0)) throw new FitError(`grid current must be positive where given (Vgk ${q.vgk} V: got ${q.ig} A)`);
  const of = (p: Float64Array) => ({ gg: p[0]!, xi: p[1]!, cathodeKelvin: p[2]!, onsetVolts: p[3]! });
  const res = multiStartFit(
    GRID_SPECS,
    [Float64Array.of(IV_DEFAULT_GRID.gg, IV_DEFAULT_GRID.xi, IV_DEFAULT_GRID.cathodeKelvin, IV_DEFAULT_GRID.onsetVolts)],
    randomStarts,
    (p, out) => {
      const g = of(p);
      rows.forEach((q, k) => {
        out[k] = Math.log(initialVelocityAmps(g, q.vgk) / q.ig!);
      });
    },
    rows.length,
  );
  return { name: 'initial-velocity', ...of(res.params) };
}
