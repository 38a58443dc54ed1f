// Newton's method for the nonlinear root in the Kirchhoff domain: find the port voltages v with
//   v = p + F i(v),  p = E u
// (Werner, Nangia, Smith & Abel, DAFx-15: the multiport nonlinearity at the root is solved as
// an implicit equation in v_C with its Jacobian J = I - F·(di/dv)). Warm-started from the
// previous solution (linearly extrapolated), step-limited, capped in iterations; on failure it
// keeps the last finite iterate (or the previous sample's solution), so it never produces NaN.
import { solveInPlace } from './linalg.ts';

/** A nonlinear multiport at the root (a tube): its ports are consecutive, starting at `offset`. */
export interface RootDevice {
  readonly portCount: number;
  /** Largest Newton step allowed per port, volts. */
  readonly maxStepVolts: readonly number[];
  /** Non-zero entries (row, column) of the device's d i / d v block, relative to its offset. */
  readonly jacobianPattern: readonly (readonly [number, number])[];
  /**
   * Write the port currents into i[offset..] and d i / d v into the Jacobian block of `jac`
   * (row-major m x m) at the entries of `jacobianPattern`.
   */
  evaluate(v: Float64Array, offset: number, i: Float64Array, jac: Float64Array, m: number): void;
}

export interface NewtonOptions {
  readonly toleranceVolts: number;
  readonly maxIterations: number;
  /** Start from 2 v[n-1] - v[n-2] instead of v[n-1] (transient use). */
  readonly extrapolate?: boolean;
}

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
  private readonly maxStep: Float64Array;
  private readonly dIdV: Float64Array;
  private readonly nzRow: Int32Array;
  private readonly nzCol: Int32Array;
  private readonly jac: Float64Array;
  private readonly r: Float64Array;
  private readonly vPrev: Float64Array;
  private readonly vPrev2: Float64Array;
  private F: Float64Array;

  constructor(devices: readonly RootDevice[], F: Float64Array) {
    this.devices = devices;
    this.m = devices.reduce((s, d) => s + d.portCount, 0);
    const m = this.m;
    this.offsets = new Int32Array(devices.length);
    this.maxStep = new Float64Array(m);
    const rows: number[] = [], cols: number[] = [];
    let o = 0;
    devices.forEach((d, k) => {
      this.offsets[k] = o;
      d.maxStepVolts.forEach((s, j) => { this.maxStep[o + j] = s; });
      for (const [r, c] of d.jacobianPattern) { rows.push(o + r); cols.push(o + c); }
      o += d.portCount;
    });
    this.nzRow = Int32Array.from(rows);
    this.nzCol = Int32Array.from(cols);
    this.F = F;
    this.v = new Float64Array(m);
    this.i = new Float64Array(m);
    this.vPrev = new Float64Array(m);
    this.vPrev2 = new Float64Array(m);
    this.dIdV = new Float64Array(m * m);
    this.jac = new Float64Array(m * m);
    this.r = new Float64Array(m);
  }

  setF(F: Float64Array): void {
    this.F = F;
  }

  /** Set the solution (and its history) to `v`, e.g. after a DC solve. */
  setState(v: Float64Array): void {
    this.v.set(v);
    this.vPrev.set(v);
    this.vPrev2.set(v);
    this.evaluate();
  }

  /** Evaluate all devices at `v` (fills `i` and dIdV). */
  private evaluate(): void {
    const m = this.m;
    for (let k = 0; k < this.devices.length; k++) this.devices[k]!.evaluate(this.v, this.offsets[k]!, this.i, this.dIdV, m);
  }

  /**
   * Solve v = p + F i(v). Returns the iteration count, or -1 if it did not converge (v then
   * holds the best finite iterate). On convergence, i is updated to first order in the last
   * step (its error is of the same order as v's, quadratically small).
   */
  solve(p: Float64Array, opts: NewtonOptions): number {
    const m = this.m;
    const F = this.F;
    const v = this.v, i = this.i, r = this.r, jac = this.jac, dIdV = this.dIdV;
    const nzRow = this.nzRow, nzCol = this.nzCol, nnz = nzRow.length;
    const vPrev = this.vPrev, vPrev2 = this.vPrev2;
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
    for (let it = 1; it <= opts.maxIterations; it++) {
      this.evaluate();
      // residual g(v) = v - p - F i ; Jacobian J = I - F dI/dV (dI/dV sparse, block diagonal)
      jac.fill(0);
      for (let row = 0; row < m; row++) {
        let s = 0;
        const fr = row * m;
        for (let c = 0; c < m; c++) s += F[fr + c]! * i[c]!;
        r[row] = p[row]! + s - v[row]!;
        jac[fr + row] = 1;
        for (let z = 0; z < nnz; z++) {
          const t = nzRow[z]!, c = nzCol[z]!;
          jac[fr + c]! -= F[fr + t]! * dIdV[t * m + c]!;
        }
      }
      if (!solveInPlace(jac, r, m)) break;
      let maxDelta = 0;
      let scale = 1;
      for (let k = 0; k < m; k++) {
        const d = Math.abs(r[k]!);
        if (!(d < Infinity)) { scale = -1; break; }
        const lim = this.maxStep[k]!;
        if (d > lim && lim / d < scale) scale = lim / d;
        if (d > maxDelta) maxDelta = d;
      }
      if (scale < 0) break;
      for (let k = 0; k < m; k++) v[k]! += scale * r[k]!;
      if (maxDelta * scale < opts.toleranceVolts) {
        // first-order current update for the last (tiny) step
        for (let z = 0; z < nnz; z++) {
          const t = nzRow[z]!, c = nzCol[z]!;
          i[t]! += dIdV[t * m + c]! * r[c]!;
        }
        this.iterationsTotal += it;
        return it;
      }
    }
    // Fallback: keep the iterate if finite, else return to the previous solution.
    this.failures++;
    let finite = true;
    for (let k = 0; k < m; k++) if (!Number.isFinite(v[k]!)) finite = false;
    if (!finite) v.set(vPrev);
    this.evaluate();
    for (let k = 0; k < m; k++) if (!Number.isFinite(i[k]!)) i[k] = 0;
    this.iterationsTotal += opts.maxIterations;
    return -1;
  }
}
