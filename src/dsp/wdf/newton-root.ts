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
import { compileCurrentUpdate, compileNewtonStep, type CurrentUpdateKernel, type NewtonStepKernel } from './newton-kernel.ts';

/** A nonlinear multiport at the root (a tube): its ports are consecutive, starting at `offset`. */
export interface RootDevice {
  readonly portCount: number;
  /** Largest Newton step allowed per port, volts. */
  readonly maxStepVolts: readonly number[];
  /**
   * Ports (relative to the offset) whose law has a cut-off at 0 V with a kink in its slope
   * (a plate or screen: no current at or below the cathode). A step may take such a port from
   * above 0 to at most a quarter of its value, not across (see NewtonRoot.solve).
   */
  readonly kneePorts?: readonly number[];
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
  /**
   * Start from an extrapolation of the last solutions instead of v[n-1] (transient use): linear,
   * quadratic or cubic, whichever has recently predicted best (NewtonRoot.scorePredictors).
   */
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
/** Below this (volts) a knee port may step across 0 (its solution may lie there). */
const KNEE_VOLTS = 1e-3;
/** Decay per solve of the predictor error means (about 100 samples of memory). */
const PREDICTOR_MEMORY = 0.99;
/** Prediction errors above this (volts, summed over ports) count as this much. */
const PREDICTOR_ERROR_CAP_VOLTS = 1e-2;

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
  /** Iterations whose step needed the pivoted LU (the generated kernel declined). */
  pivotedSteps = 0;
  private readonly kernel: NewtonStepKernel;
  private readonly update: CurrentUpdateKernel;
  private readonly devices: readonly RootDevice[];
  private readonly offsets: Int32Array;
  private readonly dOffsets: Int32Array;
  private readonly maxStep: Float64Array;
  private readonly kneePorts: Int32Array;
  /** d i / d v values in pattern order (nnz). */
  private readonly d: Float64Array;
  private readonly nzRow: Int32Array;
  private readonly nzCol: Int32Array;
  private readonly jac: Float64Array;
  private readonly piv: Int32Array;
  /** Newton step (0..m-1) and the squared residual norm (m). */
  private readonly r: Float64Array;
  /** The step last applied to v (the two-cycle guard compares the next step with it). */
  private readonly lastDelta: Float64Array;
  /** The iterate with the smallest residual so far in this solve (the fallback). */
  private readonly bestV: Float64Array;
  /** Steps halved by the two-cycle guard since construction (diagnostics). */
  backtracks = 0;
  private readonly vPrev: Float64Array;
  private readonly vPrev2: Float64Array;
  private readonly vPrev3: Float64Array;
  private F: Float64Array;
  /** F transposed (row t = column t of F), for the column-wise Jacobian build. */
  private readonly FT: Float64Array;
  /**
   * Running scalars: [0] the curvature constant K of quadraticAccept, [1..3] the linear /
   * quadratic / cubic predictor error means (in a typed array: stores of doubles into it never
   * box, whatever the JIT decides about object fields).
   */
  private readonly scalars = Float64Array.of(QUADRATIC_FLOOR_PER_VOLT, 0, 0, 0);
  private readonly predL: Float64Array;
  private readonly predQ: Float64Array;
  private readonly predC: Float64Array;
  /** Extrapolation order of the next start (1 linear, 2 quadratic, 3 cubic). */
  private order: 1 | 2 | 3 = 1;

  constructor(devices: readonly RootDevice[], F: Float64Array) {
    this.devices = devices;
    this.m = devices.reduce((s, d) => s + d.portCount, 0);
    const m = this.m;
    this.offsets = new Int32Array(devices.length);
    this.dOffsets = new Int32Array(devices.length);
    this.maxStep = new Float64Array(m);
    const knees: number[] = [];
    const rows: number[] = [], cols: number[] = [];
    let o = 0;
    devices.forEach((d, k) => {
      this.offsets[k] = o;
      this.dOffsets[k] = rows.length;
      d.maxStepVolts.forEach((s, j) => { this.maxStep[o + j] = s; });
      for (const j of d.kneePorts ?? []) knees.push(o + j);
      for (const [r, c] of d.jacobianPattern) { rows.push(o + r); cols.push(o + c); }
      o += d.portCount;
    });
    this.kneePorts = Int32Array.from(knees);
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
    this.vPrev3 = new Float64Array(m);
    this.predL = new Float64Array(m);
    this.predQ = new Float64Array(m);
    this.predC = new Float64Array(m);
    this.jac = new Float64Array(m * m);
    this.piv = new Int32Array(m);
    this.r = new Float64Array(m + 1);
    this.lastDelta = new Float64Array(m);
    this.bestV = new Float64Array(m);
    this.kernel = compileNewtonStep(m, this.nzRow, this.nzCol);
    this.update = compileCurrentUpdate(m, this.nzRow, this.nzCol);
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
    this.vPrev3.set(v);
    this.evaluate();
  }

  /** Start the next (non-extrapolating) solve from `v`; no evaluation, history untouched. */
  setStart(v: Float64Array): void {
    const own = this.v;
    for (let k = 0; k < this.m; k++) own[k] = v[k]!;
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
    const F = this.F;
    const v = this.v, i = this.i, r = this.r, d = this.d;
    const knees = this.kneePorts;
    const vPrev = this.vPrev, vPrev2 = this.vPrev2, vPrev3 = this.vPrev3, maxStep = this.maxStep;
    const tol = opts.toleranceVolts, maxIt = opts.maxIterations, quadratic = opts.quadraticAccept === true;
    if (opts.extrapolate) {
      const order = this.order, pL = this.predL, pQ = this.predQ, pC = this.predC;
      for (let k = 0; k < m; k++) {
        const a = v[k]!, b = vPrev[k]!, c = vPrev2[k]!;
        // linear, quadratic and cubic extrapolation through the last 2, 3, 4 solutions
        const l = 2 * a - b, q = 3 * (a - b) + c, cu = 4 * (a + c) - 6 * b - vPrev3[k]!;
        pL[k] = l; pQ[k] = q; pC[k] = cu;
        v[k] = order === 3 ? cu : order === 2 ? q : l;
        vPrev3[k] = c;
        vPrev2[k] = b;
        vPrev[k] = a;
      }
    } else {
      for (let k = 0; k < m; k++) { vPrev3[k] = vPrev2[k]!; vPrev2[k] = vPrev[k]!; vPrev[k] = v[k]!; }
    }
    this.solves++;
    if (quadratic) {
      const kq = this.scalars[0]! * QUADRATIC_DECAY;
      this.scalars[0] = Math.max(kq, QUADRATIC_FLOOR_PER_VOLT);
    }
    let lastStep = 0;
    let bestG = Infinity;
    const lastDelta = this.lastDelta, bestV = this.bestV;
    for (let it = 1; it <= maxIt; it++) {
      this.evaluate();
      if (!this.kernel(F, p, v, i, d, r)) {
        this.pivotedSteps++;
        if (!this.pivotedStep(p)) break;
      }
      const g = r[m]!;
      // a loop, not bestV.set(v): the builtin call was ~10 % of solve's own time (profile, 4x)
      if (g < bestG) { bestG = g; for (let k = 0; k < m; k++) bestV[k] = v[k]!; }
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
      // Knee limiting (in the spirit of SPICE's junction and FET voltage limiting, Nagel,
      // "SPICE2", UCB ERL-M520, 1975, from memory): a plate or screen above KNEE_VOLTS may step
      // to a quarter of its value but not across 0, where its current stops with a kink.
      // Without it Newton cycles there between the flat and the steep side: measured on
      // single-pentode, 2 V + 0.5 V peak at 1x, 2037 of 12000 solves failed, 250 with only the
      // two-cycle guard below.
      for (let q = 0; q < knees.length; q++) {
        const k = knees[q]!, vk = v[k]!, to = vk + scale * r[k]!;
        if (vk > KNEE_VOLTS && to < 0.25 * vk) scale = (0.75 * vk) / -r[k]!;
      }
      // Two-cycle guard: a step that would land back (within a quarter of its length) on the
      // previous iterate is halved. Newton falls into such a cycle at the pentode's plate
      // cut-off (Ip = 0 for Vpk <= 0 is a kink in the slope), the step limits making both legs
      // equal: measured on single-pentode, 2 V + 0.5 V peak at 1x, 2037 of 12000 solves
      // failed without the guard.
      if (it > 1) {
        let back = 0;
        for (let k = 0; k < m; k++) { const b = Math.abs(scale * r[k]! + lastDelta[k]!); if (b > back) back = b; }
        if (back < 0.25 * scale * maxDelta) { scale *= 0.5; this.backtracks++; }
      }
      for (let k = 0; k < m; k++) { const dv = scale * r[k]!; lastDelta[k] = dv; v[k]! += dv; }
      const step = maxDelta * scale;
      if (quadratic && it === 2 && scale === 1 && lastStep > 0) {
        const kObs = step / (lastStep * lastStep);
        if (kObs > this.scalars[0]!) this.scalars[0] = kObs;
      }
      if (step < tol || (quadratic && it === 1 && scale === 1 && this.scalars[0]! * step * step < tol)) {
        // first-order current update for the last (small) step (generated: the indirect loop
        // was ~16 % of solve's own time, profile at 4x)
        this.update(i, d, r);
        if (opts.extrapolate) this.scorePredictors();
        this.iterationsTotal += it;
        return it;
      }
      lastStep = scale === 1 ? step : 0;
    }
    // Fallback: the iterate with the smallest residual if finite, else the previous solution.
    this.failures++;
    if (opts.extrapolate) this.order = 1;
    if (bestG < Infinity) v.set(bestV);
    let finite = true;
    for (let k = 0; k < m; k++) if (!Number.isFinite(v[k]!)) finite = false;
    if (!finite) v.set(vPrev);
    // restart the extrapolation from here rather than from a trajectory that led nowhere
    vPrev.set(v); vPrev2.set(v); vPrev3.set(v);
    this.evaluate();
    for (let k = 0; k < m; k++) if (!Number.isFinite(i[k]!)) i[k] = 0;
    this.iterationsTotal += maxIt;
    return -1;
  }

  /**
   * Running mean error of each extrapolation order against the converged solution; the next
   * start uses the best one. Higher orders win when the trajectory is smooth against the sample
   * period (oversampled), the linear one when it is not (measured on pentode-triode, 1 V 1 kHz
   * sine, iterations per sample at 1x/2x/4x/8x: linear 4.73/3.60/2.74/2.00, cubic
   * 34/2.98/1.73/1.32: cubic overshoots at 1x and Newton then fails).
   */
  private scorePredictors(): void {
    const m = this.m, v = this.v, pL = this.predL, pQ = this.predQ, pC = this.predC;
    let eL = 0, eQ = 0, eC = 0;
    for (let k = 0; k < m; k++) {
      const x = v[k]!;
      eL += Math.abs(x - pL[k]!); eQ += Math.abs(x - pQ[k]!); eC += Math.abs(x - pC[k]!);
    }
    // capped: what counts is how often a start lands close enough for one Newton step, not the
    // size of the rare large miss at a sharp corner
    // Math.min, not `if (eL > cap) eL = cap`: a branch that assigns a module-level constant
    // makes TurboFan merge the value as a tagged number and box it on every call (measured:
    // ~50 minor collections per million solves, none with Math.min; counted with a gc
    // PerformanceObserver, see tests/engine-alloc.test.ts)
    const cap = PREDICTOR_ERROR_CAP_VOLTS;
    eL = Math.min(eL, cap); eQ = Math.min(eQ, cap); eC = Math.min(eC, cap);
    const a = PREDICTOR_MEMORY;
    const sc = this.scalars;
    const sL = a * sc[1]! + eL, sQ = a * sc[2]! + eQ, sC = a * sc[3]! + eC;
    sc[1] = sL; sc[2] = sQ; sc[3] = sC;
    this.order = sC < sQ && sC < sL ? 3 : sQ < sL ? 2 : 1;
  }

  /** The step by the generic path (partial pivoting) into r; false if J is singular. */
  private pivotedStep(p: Float64Array): boolean {
    const m = this.m, F = this.F, FT = this.FT, v = this.v, i = this.i, r = this.r, jac = this.jac, d = this.d, piv = this.piv;
    const nzRow = this.nzRow, nzCol = this.nzCol, nnz = nzRow.length;
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
    let g = 0;
    for (let row = 0; row < m; row++) g += r[row]! * r[row]!;
    r[m] = g;
    if (!luFactorInPlace(jac, m, piv)) return false;
    luSolveInPlace(jac, piv, m, r);
    return true;
  }
}
