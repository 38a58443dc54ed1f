// Newton's method for the nonlinear root in the Kirchhoff domain: find the port voltages v with
//   v = p + F i(v),  p = E u
// (Werner, Nangia, Smith & Abel, DAFx-15: the multiport nonlinearity at the root is solved as
// an implicit equation in v_C with its Jacobian J = I - F·(di/dv)). Warm-started from an
// extrapolation of the previous solutions; each step limited (per-port bounds, the plate and
// screen knees, SPICE-style junction limiting of the laws' exponential tails in
// junction-limit.ts) and damped; capped in iterations. A solve that does not converge is
// retried by continuation from the last converged solution (continueFrom); if that fails too,
// v and i go back to the last converged solution and `failures` counts it: an unconverged
// iterate is never returned.
//
// Speed (bench/engine.bench.ts, pentode-triode at 4x): the Jacobian is built column by column
// from the sparse d i/d v (nnz·m multiply-adds instead of m²·nnz: the old build was ~28 % of
// the profile) and factorised by an allocation-free LU with partial pivoting (linalg.luFactorInPlace).
import { luFactorInPlace, luSolveInPlace } from './linalg.ts';
import type { StepLimiter } from './junction-limit.ts';
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
  /**
   * When a solve fails, retry it by continuation from the last converged solution, down to
   * steps of 2^-homotopyDepth of the way (NewtonRoot.continueFrom). 0 or absent: no retry.
   */
  readonly homotopyDepth?: number;
}

/** The options of continuation sub-solves (one mutable object per root: no allocation). */
interface SubOptions {
  toleranceVolts: number;
  maxIterations: number;
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
/**
 * Damping: a step after which the squared residual grew more than this factor, and the Newton
 * step did not shrink either, is halved. A monotone test (Armijo's, factor 1) stalled Newton
 * on the grid law's knee (many tiny accepted steps): measured over 300 seeded random netlists
 * with hard transients at 48 kHz (tests/torture.test.ts family), factor 1 left 3108 samples
 * unconverged, 100 none.
 */
const RESIDUAL_GROWTH = 100;
/** Smallest fraction of a Newton step that backtracking tries before giving up. */
const MIN_BACKTRACK = 1 / 1024;
/** Continuation depth while samples are being held (1/8 of the way at the finest). */
const HELD_HOMOTOPY_DEPTH = 3;
/** Evaluations per continuation sub-solve. */
const SUB_MAX_ITERATIONS = 30;

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
  /** Solves that converged only by continuation (homotopyDepth), and continuation sub-solves. */
  fallbacks = 0;
  continuationSteps = 0;
  /** Iterations whose step needed the pivoted LU (the generated kernel declined). */
  pivotedSteps = 0;
  private readonly kernel: NewtonStepKernel;
  private readonly update: CurrentUpdateKernel;
  private readonly devices: readonly RootDevice[];
  private readonly offsets: Int32Array;
  private readonly dOffsets: Int32Array;
  private readonly maxStep: Float64Array;
  /** The smallest per-port step bound (a step longer than this may be shortened). */
  private readonly maxStepFloor: number;
  private readonly kneePorts: Int32Array;
  /** d i / d v values in pattern order (nnz). */
  private readonly d: Float64Array;
  private readonly nzRow: Int32Array;
  private readonly nzCol: Int32Array;
  private readonly jac: Float64Array;
  private readonly piv: Int32Array;
  /** Newton step (0..m-1) and the squared residual norm (m). */
  private readonly r: Float64Array;
  /** The last full Newton step and the iterate it was taken from (for backtracking). */
  private readonly lastDelta: Float64Array;
  private readonly vOld: Float64Array;
  /** Steps halved by the residual-norm backtracking since construction (diagnostics). */
  backtracks = 0;
  private readonly limiters: readonly StepLimiter[];
  /** The last converged solution and the p it solved (the start of a continuation). */
  private readonly pLast: Float64Array;
  private readonly vLast: Float64Array;
  private hasLast = false;
  /** Consecutive failed solves (held samples). */
  private heldInARow = 0;
  /** Continuation workspace: the sub-step's p and the last converged sub-step's v. */
  private readonly pT: Float64Array;
  private readonly vA: Float64Array;
  private readonly subOptions: SubOptions = { toleranceVolts: 1e-5, maxIterations: SUB_MAX_ITERATIONS };
  private continuationIterations = 0;
  /** [0]: the step fraction handed to the limiters (an array: no boxed double crosses the call). */
  private readonly scaleBox = new Float64Array(1);
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

  /**
   * @param limiters junction limiting of the devices' exponential tails (wdf/junction-limit.ts),
   *   indexed by root port
   */
  constructor(devices: readonly RootDevice[], F: Float64Array, limiters: readonly StepLimiter[] = []) {
    this.devices = devices;
    this.m = devices.reduce((s, d) => s + d.portCount, 0);
    const m = this.m;
    this.offsets = new Int32Array(devices.length);
    this.dOffsets = new Int32Array(devices.length);
    this.maxStep = new Float64Array(m);
    const knees: number[] = [];
    const rows: number[] = [],
      cols: number[] = [];
    let o = 0;
    devices.forEach((d, k) => {
      this.offsets[k] = o;
      this.dOffsets[k] = rows.length;
      d.maxStepVolts.forEach((s, j) => {
        this.maxStep[o + j] = s;
      });
      for (const j of d.kneePorts ?? []) knees.push(o + j);
      for (const [r, c] of d.jacobianPattern) {
        rows.push(o + r);
        cols.push(o + c);
      }
      o += d.portCount;
    });
    this.kneePorts = Int32Array.from(knees);
    this.maxStepFloor = m > 0 ? Math.min(...this.maxStep) : Infinity;
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
    this.vOld = new Float64Array(m);
    this.pLast = new Float64Array(m);
    this.vLast = new Float64Array(m);
    this.pT = new Float64Array(m);
    this.vA = new Float64Array(m);
    this.limiters = limiters;
    this.kernel = compileNewtonStep(m, this.nzRow, this.nzCol);
    this.update = compileCurrentUpdate(m, this.nzRow, this.nzCol);
  }

  /** New F (m x m, row-major); copied into preallocated storage, no allocation. */
  setF(F: Float64Array): void {
    this.F = F;
    const m = this.m,
      FT = this.FT;
    for (let r = 0; r < m; r++) for (let c = 0; c < m; c++) FT[c * m + r] = F[r * m + c]!;
  }

  /**
   * Set the solution (and its history) to `v`, e.g. after a DC solve; with `p`, v is the
   * solution at p (a continuation may start from it).
   */
  setState(v: Float64Array, p?: Float64Array): void {
    this.v.set(v);
    this.vPrev.set(v);
    this.vPrev2.set(v);
    this.vPrev3.set(v);
    this.order = 1;
    if (p) this.remember(p);
    else this.hasLast = false;
    this.evaluate();
  }

  /** Start the next (non-extrapolating) solve from `v`; no evaluation, history untouched. */
  setStart(v: Float64Array): void {
    const own = this.v;
    for (let k = 0; k < this.m; k++) own[k] = v[k]!;
  }

  /** Evaluate all devices at `v` (fills `i` and the d i/d v values). */
  private evaluate(): void {
    const devices = this.devices,
      offsets = this.offsets,
      dOffsets = this.dOffsets;
    for (let k = 0; k < devices.length; k++) devices[k]!.evaluate(this.v, offsets[k]!, this.i, this.d, dOffsets[k]!);
  }

  /**
   * Solve v = p + F i(v). Returns the iteration count (continuation sub-solves included), or -1
   * if it did not converge: v and i then hold the last converged solution again (an unconverged
   * iterate is never returned) and `failures` counts it. On convergence, i is updated to first
   * order in the last step (its error is of the same order as v's, quadratically small).
   *
   * With `opts.homotopyDepth`, a solve that fails is retried by continuation from the last
   * converged solution (see continueFrom); `fallbacks` counts those solves.
   */
  solve(p: Float64Array, opts: NewtonOptions): number {
    const m = this.m;
    const v = this.v;
    const vPrev = this.vPrev,
      vPrev2 = this.vPrev2,
      vPrev3 = this.vPrev3;
    if (opts.extrapolate) {
      const order = this.order,
        pL = this.predL,
        pQ = this.predQ,
        pC = this.predC;
      for (let k = 0; k < m; k++) {
        const a = v[k]!,
          b = vPrev[k]!,
          c = vPrev2[k]!;
        // linear, quadratic and cubic extrapolation through the last 2, 3, 4 solutions
        const l = 2 * a - b,
          q = 3 * (a - b) + c,
          cu = 4 * (a + c) - 6 * b - vPrev3[k]!;
        pL[k] = l;
        pQ[k] = q;
        pC[k] = cu;
        v[k] = order === 3 ? cu : order === 2 ? q : l;
        vPrev3[k] = c;
        vPrev2[k] = b;
        vPrev[k] = a;
      }
    } else {
      for (let k = 0; k < m; k++) {
        vPrev3[k] = vPrev2[k]!;
        vPrev2[k] = vPrev[k]!;
        vPrev[k] = v[k]!;
      }
    }
    this.solves++;
    if (opts.quadraticAccept === true) {
      const kq = this.scalars[0]! * QUADRATIC_DECAY;
      this.scalars[0] = Math.max(kq, QUADRATIC_FLOOR_PER_VOLT);
    }
    let n = this.iterate(p, opts, opts.maxIterations);
    if (n >= 0) {
      if (opts.extrapolate) this.scorePredictors();
      this.remember(p);
      this.heldInARow = 0;
      this.iterationsTotal += n;
      return n;
    }
    let spent = opts.maxIterations;
    // after a held sample, a cheaper continuation: the state is the same, so the same failure is
    // likely (a circuit with no solution would otherwise cost ~400 evaluations per sample)
    const depth = Math.min(opts.homotopyDepth ?? 0, this.heldInARow > 0 ? HELD_HOMOTOPY_DEPTH : Infinity);
    if (depth > 0 && this.hasLast) {
      this.fallbacks++;
      n = this.continueFrom(this.pLast, this.vLast, p, opts, depth);
      if (n >= 0) {
        this.heldInARow = 0;
        this.restartHistory();
        this.remember(p);
        this.iterationsTotal += spent + n;
        return spent + n;
      }
      spent += this.continuationIterations;
    }
    // Failed: back to the last converged solution (the caller holds its state).
    this.failures++;
    this.heldInARow++;
    if (this.hasLast) v.set(this.vLast);
    else v.set(vPrev);
    this.restartHistory();
    this.evaluate();
    for (let k = 0; k < m; k++) if (!Number.isFinite(this.i[k]!)) this.i[k] = 0;
    this.iterationsTotal += spent;
    return -1;
  }

  /** Record the converged solution at p (the start of a later continuation). */
  private remember(p: Float64Array): void {
    const m = this.m,
      v = this.v,
      pl = this.pLast,
      vl = this.vLast;
    for (let k = 0; k < m; k++) {
      pl[k] = p[k]!;
      vl[k] = v[k]!;
    }
    this.hasLast = true;
  }

  /** Restart the extrapolation from v rather than from a trajectory that led nowhere. */
  private restartHistory(): void {
    const m = this.m,
      v = this.v;
    for (let k = 0; k < m; k++) {
      const x = v[k]!;
      this.vPrev[k] = x;
      this.vPrev2[k] = x;
      this.vPrev3[k] = x;
    }
    this.order = 1;
  }

  /**
   * Solve at p1 by continuation from a known solution v0 at p0: p moves along the straight line
   * p0 -> p1 (the root's open-circuit voltages carry the input sample and the capacitor waves,
   * so this is a homotopy over the step's input at the same sample period, F unchanged). The
   * step in the line parameter starts at 1/2, halves after a failed sub-solve and doubles after
   * a converged one; below 2^-depth it gives up. Only converged sub-solves are continued from.
   * Returns the Newton iterations spent (>= 0) with v, i the solution at p1, or -1 (v then
   * undefined: the caller restores it). Allocates nothing.
   */
  continueFrom(p0: Float64Array, v0: Float64Array, p1: Float64Array, opts: NewtonOptions, depth: number): number {
    const m = this.m,
      v = this.v,
      pT = this.pT,
      vA = this.vA;
    // v0 may alias vLast: copy before anything writes
    for (let k = 0; k < m; k++) vA[k] = v0[k]!;
    const hMin = Math.pow(0.5, depth);
    const sub = this.subOptions;
    sub.toleranceVolts = opts.toleranceVolts;
    sub.maxIterations = Math.min(opts.maxIterations, SUB_MAX_ITERATIONS);
    let lam = 0,
      h = 0.5,
      total = 0;
    this.continuationIterations = 0;
    while (lam < 1) {
      const t = Math.min(1, lam + h);
      for (let k = 0; k < m; k++) {
        pT[k] = p0[k]! + t * (p1[k]! - p0[k]!);
        v[k] = vA[k]!;
      }
      const n = this.iterate(pT, sub, sub.maxIterations);
      total += n >= 0 ? n : sub.maxIterations;
      this.continuationSteps++;
      if (n >= 0) {
        lam = t;
        for (let k = 0; k < m; k++) vA[k] = v[k]!;
        h = Math.min(2 * h, 1);
      } else {
        h *= 0.5;
        if (h < hMin) {
          this.continuationIterations = total;
          return -1;
        }
      }
    }
    this.continuationIterations = total;
    return total;
  }

  /**
   * Newton from the present v towards v = p + F i(v): at most maxIt device evaluations. Each step
   * is limited (per-port step bounds, knees, junction limiting of the exponential tails) and
   * damped: a step after which the residual |g| grew by more than RESIDUAL_GROWTH while the
   * Newton step did not shrink is halved and retried from the previous iterate. Converged when
   * the full Newton step is below the tolerance (the step is then taken), or, with
   * quadraticAccept, when the first step predicts it. Returns the evaluations used, or -1 (v is
   * then the last iterate, not a solution).
   */
  private iterate(p: Float64Array, opts: NewtonOptions, maxIt: number): number {
    const m = this.m;
    const F = this.F;
    const v = this.v,
      i = this.i,
      r = this.r,
      d = this.d;
    const knees = this.kneePorts,
      limiters = this.limiters,
      maxStep = this.maxStep,
      maxStepFloor = this.maxStepFloor;
    const tol = opts.toleranceVolts,
      quadratic = opts.quadraticAccept === true;
    const vOld = this.vOld,
      dOld = this.lastDelta;
    let lastStep = 0;
    let gOld = Infinity;
    let sOld = 0;
    let dOldMax = Infinity;
    for (let it = 1; it <= maxIt; it++) {
      this.evaluate();
      if (!this.kernel(F, p, v, i, d, r)) {
        this.pivotedSteps++;
        if (!this.pivotedStep(p)) {
          if (it > 1 && sOld > MIN_BACKTRACK) {
            sOld *= 0.5;
            this.scaleBox[0] = sOld;
            this.backtrack();
            continue;
          }
          return -1;
        }
      }
      const g = r[m]!;
      let maxDelta = 0;
      let finite = g < Infinity;
      for (let k = 0; k < m; k++) {
        const dk = Math.abs(r[k]!);
        if (!(dk < Infinity)) finite = false;
        if (dk > maxDelta) maxDelta = dk;
      }
      // quadraticAccept's curvature constant from a full second step after a full first one:
      // K >= |δ2| / |δ1|^2 (a second step the limits will shorten says nothing about it)
      if (quadratic && it === 2 && lastStep > 0 && maxDelta <= maxStepFloor) {
        const kObs = maxDelta / (lastStep * lastStep);
        if (kObs > this.scalars[0]!) this.scalars[0] = kObs;
      }
      if (finite && (maxDelta < tol || (quadratic && it === 1 && this.scalars[0]! * maxDelta * maxDelta < tol))) {
        // converged: take the (small) full step, currents to first order (generated: the
        // indirect loop was ~16 % of solve's own time, profile at 4x)
        for (let k = 0; k < m; k++) v[k]! += r[k]!;
        this.update(i, d, r);
        return it;
      }
      // Backtracking: the last step made the residual |g| much larger and did not shorten the
      // Newton step either (Deuflhard's natural monotonicity test, here with the new Jacobian;
      // Deuflhard, "Newton methods for nonlinear problems", Springer 2004, ch. 3, from memory).
      if (it > 1 && !(g <= RESIDUAL_GROWTH * gOld) && !(maxDelta <= (1 - 0.25 * sOld) * dOldMax)) {
        if (!(sOld > MIN_BACKTRACK)) return -1;
        sOld *= 0.5;
        this.scaleBox[0] = sOld;
        this.backtrack();
        lastStep = 0;
        continue;
      }
      if (!finite) return -1;
      let scale = 1;
      for (let k = 0; k < m; k++) {
        const dk = Math.abs(r[k]!),
          lim = maxStep[k]!;
        if (dk > lim && lim / dk < scale) scale = lim / dk;
      }
      // Knee limiting (in the spirit of SPICE's junction and FET voltage limiting, Nagel,
      // "SPICE2", UCB ERL-M520, 1975, from memory): a plate or screen above KNEE_VOLTS may step
      // to a quarter of its value but not across 0, where its current stops with a kink.
      // Without it Newton cycles there between the flat and the steep side: measured on
      // single-pentode, 2 V + 0.5 V peak at 1x, 2037 of 12000 solves failed.
      for (let q = 0; q < knees.length; q++) {
        const k = knees[q]!,
          vk = v[k]!,
          to = vk + scale * r[k]!;
        if (vk > KNEE_VOLTS && to < 0.25 * vk) scale = (0.75 * vk) / -r[k]!;
      }
      // junction limiting of the exponential tails (wdf/junction-limit.ts)
      if (limiters.length > 0) {
        const sc = this.scaleBox;
        sc[0] = scale;
        for (let q = 0; q < limiters.length; q++) limiters[q]!.limit(v, r, sc);
        scale = sc[0]!;
      }
      for (let k = 0; k < m; k++) {
        const dv = r[k]!;
        vOld[k] = v[k]!;
        dOld[k] = dv;
        v[k] = vOld[k]! + scale * dv;
      }
      gOld = g;
      sOld = scale;
      dOldMax = maxDelta;
      lastStep = scale === 1 ? maxDelta : 0;
    }
    return -1;
  }

  /** Retake the last step shortened: v = vOld + h·dOld, h = scaleBox[0] (no double crosses the call). */
  private backtrack(): void {
    const m = this.m,
      v = this.v,
      vOld = this.vOld,
      dOld = this.lastDelta,
      h = this.scaleBox[0]!;
    for (let k = 0; k < m; k++) v[k] = vOld[k]! + h * dOld[k]!;
    this.backtracks++;
  }

  /**
   * Running mean error of each extrapolation order against the converged solution; the next
   * start uses the best one. Higher orders win when the trajectory is smooth against the sample
   * period (oversampled), the linear one when it is not (measured on pentode-triode, 1 V 1 kHz
   * sine, iterations per sample at 1x/2x/4x/8x: linear 4.73/3.60/2.74/2.00, cubic
   * 34/2.98/1.73/1.32: cubic overshoots at 1x and Newton then fails).
   */
  private scorePredictors(): void {
    const m = this.m,
      v = this.v,
      pL = this.predL,
      pQ = this.predQ,
      pC = this.predC;
    let eL = 0,
      eQ = 0,
      eC = 0;
    for (let k = 0; k < m; k++) {
      const x = v[k]!;
      eL += Math.abs(x - pL[k]!);
      eQ += Math.abs(x - pQ[k]!);
      eC += Math.abs(x - pC[k]!);
    }
    // capped: what counts is how often a start lands close enough for one Newton step, not the
    // size of the rare large miss at a sharp corner
    // Math.min, not `if (eL > cap) eL = cap`: a branch that assigns a module-level constant
    // makes TurboFan merge the value as a tagged number and box it on every call (measured:
    // ~50 minor collections per million solves, none with Math.min; counted with a gc
    // PerformanceObserver, see tests/engine-alloc.test.ts)
    const cap = PREDICTOR_ERROR_CAP_VOLTS;
    eL = Math.min(eL, cap);
    eQ = Math.min(eQ, cap);
    eC = Math.min(eC, cap);
    const a = PREDICTOR_MEMORY;
    const sc = this.scalars;
    const sL = a * sc[1]! + eL,
      sQ = a * sc[2]! + eQ,
      sC = a * sc[3]! + eC;
    sc[1] = sL;
    sc[2] = sQ;
    sc[3] = sC;
    this.order = sC < sQ && sC < sL ? 3 : sQ < sL ? 2 : 1;
  }

  /** The step by the generic path (partial pivoting) into r; false if J is singular. */
  private pivotedStep(p: Float64Array): boolean {
    const m = this.m,
      F = this.F,
      FT = this.FT,
      v = this.v,
      i = this.i,
      r = this.r,
      jac = this.jac,
      d = this.d,
      piv = this.piv;
    const nzRow = this.nzRow,
      nzCol = this.nzCol,
      nnz = nzRow.length;
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
      const t = nzRow[z]! * m,
        c = nzCol[z]!;
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
