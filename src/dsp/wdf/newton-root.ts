// Newton's method for the nonlinear root in the Kirchhoff domain: find the port voltages v with
//   v = p + F i(v),  p = E u
// (Werner, Nangia, Smith & Abel, DAFx-15: the multiport nonlinearity at the root is solved as
// an implicit equation in v_C with its Jacobian J = I - F·(di/dv)). Warm-started from the
// previous solution (linearly extrapolated), step-limited, capped in iterations; on failure it
// keeps the last finite iterate (or the previous sample's solution), so it never produces NaN.
//
// Speed (bench/engine.bench.ts, pentode-triode at 4x): the Jacobian is built column by column
// from the sparse d i/d v (nnz·m multiply-adds instead of m²·nnz: the old build was ~28 % of
// the profile) and factorised by an allocation-free LU with partial pivoting (linalg.luFactorInPlace).
import { luFactorInPlace, luSolveInPlace } from './linalg.ts';

/** A nonlinear multiport at the root (a tube): its ports are consecutive, starting at `offset`. */
export interface RootDevice {
  readonly portCount: number;
  /** Largest Newton step allowed per port, volts. */
  readonly maxStepVolts: readonly number[];
  /** Non-zero entries (row, column) of the device's d i / d v block, relative to its offset. */
  readonly jacobianPattern: readonly (readonly [number, number])[];
  /**
   * Write the port currents into i[offset..] and the entries of d i / d v, in `jacobianPattern`
   * order, into d[dOffset..].
   */
  evaluate(v: Float64Array, offset: number, i: Float64Array, d: Float64Array, dOffset: number): void;
}

export interface NewtonOptions {
  readonly toleranceVolts: number;
  readonly maxIterations: number;
  /** Start from 2 v[n-1] - v[n-2] instead of v[n-1] (transient use). */
  readonly extrapolate?: boolean;
  /**
   * Accept after the first step when its predicted remaining error K·|δ|² (Newton converges
   * quadratically: |δ₂| ≈ K|δ₁|², Kelley, "Iterative methods for linear and nonlinear
   * equations", SIAM 1995, ch. 5, from memory) is below toleranceVolts. K is the largest ratio
   * |δ₂|/|δ₁|² seen recently (never below `quadraticFloorPerVolt`). Saves ~1 device evaluation
   * per sample at 4x (2.05 → ~1.2 iterations/sample, bench pentode-triode).
   */
  readonly quadraticAccept?: boolean;
}

/** Smallest curvature constant K assumed by quadraticAccept, 1/V (99th percentile measured ≈ 1.4 at 4x). */
const QUADRATIC_FLOOR_PER_VOLT = 2;
/** Per-solve decay of the learnt K towards the floor. */
const QUADRATIC_DECAY = 0.999;

export class NewtonRoot {
  readonly m: number;
  /** Port voltages: the solution of the last solve (and the warm start of the next). */
  readonly v: Float64Array;
  /** Port currents at `v`. */
  readonly i: Float64Array;
  /** Totals since construction (diagnostics). */
  iterationsTotal = 0;
  solves = 0;
  failures = 0;
  private readonly devices: readonly RootDevice[];
  private readonly offsets: Int32Array;
  private readonly dOffsets: Int32Array;
  private readonly maxStep: Float64Array;
  /** d i / d v values in pattern order (nnz). */
  private readonly d: Float64Array;
  private readonly nzRow: Int32Array;
  private readonly nzCol: Int32Array;
  private readonly jac: Float64Array;
  private readonly piv: Int32Array;
  private readonly r: Float64Array;
  private readonly vPrev: Float64Array;
  private readonly vPrev2: Float64Array;
  private F: Float64Array;
  /** F transposed (row t = column t of F), for the column-wise Jacobian build. */
  private readonly FT: Float64Array;
  private kQuadratic = QUADRATIC_FLOOR_PER_VOLT;

  constructor(devices: readonly RootDevice[], F: Float64Array) {
    this.devices = devices;
    this.m = devices.reduce((s, d) => s + d.portCount, 0);
    const m = this.m;
    this.offsets = new Int32Array(devices.length);
    this.dOffsets = new Int32Array(devices.length);
    this.maxStep = new Float64Array(m);
    const rows: number[] = [], cols: number[] = [];
    let o = 0;
    devices.forEach((d, k) => {
      this.offsets[k] = o;
      this.dOffsets[k] = rows.length;
      d.maxStepVolts.forEach((s, j) => { this.maxStep[o + j] = s; });
      for (const [r, c] of d.jacobianPattern) { rows.push(o + r); cols.push(o + c); }
      o += d.portCount;
    });
    this.nzRow = Int32Array.from(rows);
    this.nzCol = Int32Array.from(cols);
    this.d = new Float64Array(rows.length);
    this.F = F;
    this.FT = new Float64Array(m * m);
    this.setF(F);
    this.v = new Float64Array(m);
    this.i = new Float64Array(m);
    this.vPrev = new Float64Array(m);
    this.vPrev2 = new Float64Array(m);
    this.jac = new Float64Array(m * m);
    this.piv = new Int32Array(m);
    this.r = new Float64Array(m);
  }

  /** New F (m x m, row-major); copied into preallocated storage, no allocation. */
  setF(F: Float64Array): void {
    this.F = F;
    const m = this.m, FT = this.FT;
    for (let r = 0; r < m; r++) for (let c = 0; c < m; c++) FT[c * m + r] = F[r * m + c]!;
  }

  /** Set the solution (and its history) to `v`, e.g. after a DC solve. */
  setState(v: Float64Array): void {
    this.v.set(v);
    this.vPrev.set(v);
    this.vPrev2.set(v);
    this.evaluate();
  }

  /** Evaluate all devices at `v` (fills `i` and the d i/d v values). */
  private evaluate(): void {
    const devices = this.devices, offsets = this.offsets, dOffsets = this.dOffsets;
    for (let k = 0; k < devices.length; k++) devices[k]!.evaluate(this.v, offsets[k]!, this.i, this.d, dOffsets[k]!);
  }

  /**
   * Solve v = p + F i(v). Returns the iteration count, or -1 if it did not converge (v then
   * holds the best finite iterate). On convergence, i is updated to first order in the last
   * step (its error is of the same order as v's, quadratically small).
   */
  solve(p: Float64Array, opts: NewtonOptions): number {
    const m = this.m;
    const F = this.F, FT = this.FT;
    const v = this.v, i = this.i, r = this.r, jac = this.jac, d = this.d, piv = this.piv;
    const nzRow = this.nzRow, nzCol = this.nzCol, nnz = nzRow.length;
    const vPrev = this.vPrev, vPrev2 = this.vPrev2, maxStep = this.maxStep;
    const tol = opts.toleranceVolts, maxIt = opts.maxIterations, quadratic = opts.quadraticAccept === true;
    if (opts.extrapolate) {
      for (let k = 0; k < m; k++) {
        const a = v[k]!;
        v[k] = 2 * a - vPrev[k]!;
        vPrev2[k] = vPrev[k]!;
        vPrev[k] = a;
      }
    } else {
      vPrev2.set(vPrev);
      vPrev.set(v);
    }
    this.solves++;
    if (quadratic) {
      const kq = this.kQuadratic * QUADRATIC_DECAY;
      this.kQuadratic = kq > QUADRATIC_FLOOR_PER_VOLT ? kq : QUADRATIC_FLOOR_PER_VOLT;
    }
    let lastStep = 0;
    for (let it = 1; it <= maxIt; it++) {
      this.evaluate();
      // residual g(v) = v - p - F i (r = -g) ; Jacobian J = I - F dI/dV, built column-wise
      for (let row = 0; row < m; row++) {
        let s = p[row]! - v[row]!;
        const fr = row * m;
        for (let c = 0; c < m; c++) s += F[fr + c]! * i[c]!;
        r[row] = s;
      }
      jac.fill(0);
      for (let k = 0; k < m; k++) jac[k * m + k] = 1;
      for (let z = 0; z < nnz; z++) {
        const dz = d[z]!;
        if (dz === 0) continue;
        const t = nzRow[z]! * m, c = nzCol[z]!;
        for (let row = 0; row < m; row++) jac[row * m + c]! -= FT[t + row]! * dz;
      }
      if (!luFactorInPlace(jac, m, piv)) break;
      luSolveInPlace(jac, piv, m, r);
      let maxDelta = 0;
      let scale = 1;
      for (let k = 0; k < m; k++) {
        const dk = Math.abs(r[k]!);
        if (!(dk < Infinity)) { scale = -1; break; }
        const lim = maxStep[k]!;
        if (dk > lim && lim / dk < scale) scale = lim / dk;
        if (dk > maxDelta) maxDelta = dk;
      }
      if (scale < 0) break;
      for (let k = 0; k < m; k++) v[k]! += scale * r[k]!;
      const step = maxDelta * scale;
      if (quadratic && it === 2 && scale === 1 && lastStep > 0) {
        const kObs = step / (lastStep * lastStep);
        if (kObs > this.kQuadratic) this.kQuadratic = kObs;
      }
      if (step < tol || (quadratic && it === 1 && scale === 1 && this.kQuadratic * step * step < tol)) {
        // first-order current update for the last (small) step
        for (let z = 0; z < nnz; z++) i[nzRow[z]!]! += d[z]! * r[nzCol[z]!]!;
        this.iterationsTotal += it;
        return it;
      }
      lastStep = scale === 1 ? step : 0;
    }
    // Fallback: keep the iterate if finite, else return to the previous solution.
    this.failures++;
    let finite = true;
    for (let k = 0; k < m; k++) if (!Number.isFinite(v[k]!)) finite = false;
    if (!finite) v.set(vPrev);
    this.evaluate();
    for (let k = 0; k < m; k++) if (!Number.isFinite(i[k]!)) i[k] = 0;
    this.iterationsTotal += maxIt;
    return -1;
  }
}
