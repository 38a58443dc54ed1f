// Antiderivative anti-aliasing (ADAA) of the nonlinear root, first order, by adaptive quadrature.
//
// First-order ADAA (Parker, Zavalishin & Le Bivic, "Reducing the aliasing of nonlinear
// waveshaping using continuous-time convolution", DAFx-16, cited from memory) replaces a memoryless nonlinearity's
// sample y[n] = g(x[n]) by its mean over the straight line from x[n-1] to x[n],
//   ybar[n] = integral_0^1 g(x[n-1] + tau (x[n] - x[n-1])) dtau,                          (ADAA-1)
// the continuous-time output convolved with a one-sample rectangle before sampling: aliases that
// land at f are attenuated by |sinc(1 - f/fs)| on their way down. Holters ("Antiderivative
// antialiasing for stateful systems", Appl. Sci. 10(1):20, 2020) extends it to circuits with
// memory by applying it not to the device laws but to the map from the linear part's prediction
// p (here: the root's open-circuit port voltages, which depend on the capacitor waves and the
// input only) to the nonlinear currents i = g(p), defined implicitly by v = p + F i(v)
// (wdf/newton-root.ts). Averaging the device laws inside the implicit solve instead, i.e.
// i = mean of i(v) over [v[n-1], v[n]], puts a half-sample delay inside the resistive feedback
// loop; measured here (pentode-triode, 1 V peak, 2x) it made aliasing worse (-28 dB against
// -31.5 dB plain), while averaging g(p) gave -52 dB.
//
// The tube laws have no closed-form antiderivative, and for a multi-port root ADAA-1 needs the
// line integral of g along the segment of p, so the mean is taken by adaptive Simpson
// quadrature (Lyness, "Notes on the adaptive Simpson quadrature routine", J. ACM 16, 1969, from
// memory):
// each node is a Newton solve of the root at an intermediate p, warm-started from the
// interpolation of its neighbours. Where the currents are smooth in time (most samples when
// oversampled) no node is needed: the trapezoid with an end correction from the previous
// second difference (Euler-Maclaurin, integral = (g0 + g1)/2 - (g'(1) - g'(0))/12 + ...) is
// used. Errors are weighed in volts, each port's current by its Thevenin resistance |F_rr|.
//
// Measured (pentode-triode, 1 V peak sine near 1 kHz / 2.5 kHz at 48 kHz, aliases 20 Hz-15 kHz
// against the whole output): see bench/alias.bench.ts and DEVELOPERS.md "Anti-aliasing".
//
// Costs and side effects: the root's currents are those of the mean over the last step, i.e.
// centred half a (fast-rate) sample earlier; for small signals the mean is the two-tap average
// (1 + z^-1)/2 of the linear response, a droop of cos(pi f / fs) (-0.12 dB at 10 kHz at 4x).
import { NewtonRoot, type NewtonOptions, type RootDevice } from './newton-root.ts';
import type { StepLimiter } from './junction-limit.ts';

export interface AveragingOptions {
  /** Accept a panel when its estimated error, in volts at the ports, is below this. */
  readonly toleranceVolts: number;
  /** Finest subdivision: 2^maxDepth panels per sample. */
  readonly maxDepth: number;
}

/**
 * Error tolerance of the quadrature (volts, a port current error times its Thevenin resistance).
 * Measured on pentode-triode at 2x and 4x: 1 V gives the alias level of a converged
 * 16-point Gauss mean to within 0.2 dB; see DEVELOPERS.md.
 */
export const DEFAULT_AVERAGING: AveragingOptions = { toleranceVolts: 1, maxDepth: 5 };

const INTERIOR: NewtonOptions = { toleranceVolts: 1e-5, maxIterations: 40, extrapolate: false, quadraticAccept: true };
/** An interior node that fails from its interpolated start is re-solved by continuation from the panel's start, down to 1/256. */
const INTERIOR_HOMOTOPY_DEPTH = 8;

export class RootAverager {
  readonly m: number;
  /** The root's currents averaged over the last step (what the linear part integrates). */
  readonly iMean: Float64Array;
  /** Interior Newton solves since construction ([0]; diagnostics). */
  readonly interiorSolves = new Float64Array(1);
  /**
   * Steps whose mean fell back to the end-point currents ([0]): an interior node did not
   * converge even by continuation, so the step uses the plain discretisation's currents.
   */
  readonly fallbacks = new Float64Array(1);
  private readonly pA: Float64Array;
  private readonly vA: Float64Array;
  private failed = false;
  private readonly opts: AveragingOptions;
  private readonly n: number;
  private readonly scratch: NewtonRoot;
  /** Per-port weight |F_rr|, ohms. */
  private readonly weight: Float64Array;
  private readonly p0: Float64Array;
  private readonly pMid: Float64Array;
  /** The previous step's start currents (for the second difference). */
  private readonly iBefore: Float64Array;
  /** Nodes on the dyadic grid tau = k / 2^maxDepth: voltages and currents, (n+1) * m each. */
  private readonly nodeV: Float64Array;
  private readonly nodeI: Float64Array;
  private readonly guess: Float64Array;
  /** Interval stack (grid indices a, b). */
  private readonly stack: Int32Array;
  private valid = false;

  constructor(devices: readonly RootDevice[], F: Float64Array, opts: AveragingOptions = DEFAULT_AVERAGING, limiters: readonly StepLimiter[] = []) {
    this.scratch = new NewtonRoot(devices, F, limiters);
    const m = this.scratch.m;
    this.m = m;
    this.opts = opts;
    if (!(opts.maxDepth >= 1 && opts.maxDepth <= 8)) throw new Error('averaging depth must be 1 to 8');
    this.n = 1 << opts.maxDepth;
    this.iMean = new Float64Array(m);
    this.weight = new Float64Array(m);
    this.p0 = new Float64Array(m);
    this.pMid = new Float64Array(m);
    this.iBefore = new Float64Array(m);
    this.nodeV = new Float64Array((this.n + 1) * m);
    this.nodeI = new Float64Array((this.n + 1) * m);
    this.guess = new Float64Array(m);
    this.pA = new Float64Array(m);
    this.vA = new Float64Array(m);
    this.stack = new Int32Array(2 * (opts.maxDepth + 2));
    this.setF(F);
  }

  /** New root matrix F (after a value change); the averaging history is kept. */
  setF(F: Float64Array): void {
    this.scratch.setF(F);
    const m = this.m;
    for (let r = 0; r < m; r++) this.weight[r] = Math.abs(F[r * m + r]!);
  }

  /** Forget the history: the next step uses its end-point currents only (after a reset). */
  reset(): void {
    this.valid = false;
  }

  /**
   * Average over the step that ends at prediction p with end-point solution (v1, i1) (the
   * transient root's result for p). The start is the previous call's end. Writes iMean.
   */
  step(p: Float64Array, v1: Float64Array, i1: Float64Array): void {
    const m = this.m,
      n = this.n,
      nodeV = this.nodeV,
      nodeI = this.nodeI,
      w = this.weight,
      iMean = this.iMean;
    if (!this.valid) {
      iMean.set(i1);
      this.iBefore.set(i1);
      nodeI.set(i1, 0);
      nodeV.set(v1, 0);
      this.p0.set(p);
      this.valid = true;
      return;
    }
    const iBefore = this.iBefore,
      p0 = this.p0,
      tol = this.opts.toleranceVolts;
    // smooth in time: corrected trapezoid, no node (and the end goes straight to the start)
    let e2 = 0;
    for (let r = 0; r < m; r++) {
      const d2 = w[r]! * Math.abs(i1[r]! - 2 * nodeI[r]! + iBefore[r]!);
      if (d2 > e2) e2 = d2;
    }
    if (e2 < tol) {
      for (let r = 0; r < m; r++) {
        const i0 = nodeI[r]!,
          ie = i1[r]!,
          ib = iBefore[r]!;
        iMean[r] = 0.5 * (i0 + ie) - (ie - 2 * i0 + ib) / 12;
        iBefore[r] = i0;
        nodeI[r] = ie;
        nodeV[r] = v1[r]!;
        p0[r] = p[r]!;
      }
      return;
    }
    const end = n * m;
    for (let r = 0; r < m; r++) {
      nodeV[end + r] = v1[r]!;
      nodeI[end + r] = i1[r]!;
    }
    this.failed = false;
    this.adaptiveSimpson(p);
    if (this.failed) {
      iMean.set(i1);
      this.fallbacks[0] = this.fallbacks[0]! + 1;
    }
    // the end becomes the next start
    for (let r = 0; r < m; r++) {
      iBefore[r] = nodeI[r]!;
      nodeI[r] = nodeI[end + r]!;
      nodeV[r] = nodeV[end + r]!;
      p0[r] = p[r]!;
    }
  }

  private adaptiveSimpson(p: Float64Array): void {
    const m = this.m,
      n = this.n,
      nodeV = this.nodeV,
      nodeI = this.nodeI,
      w = this.weight,
      iMean = this.iMean;
    const p0 = this.p0,
      pMid = this.pMid,
      guess = this.guess,
      stack = this.stack,
      scratch = this.scratch;
    const tol = this.opts.toleranceVolts;
    iMean.fill(0);
    let top = 0;
    stack[top++] = 0;
    stack[top++] = n;
    while (top > 0) {
      const b = stack[--top]!,
        a = stack[--top]!;
      const mid = (a + b) >> 1,
        oa = a * m,
        ob = b * m,
        om = mid * m;
      const tau = mid / n;
      for (let r = 0; r < m; r++) {
        pMid[r] = p0[r]! + tau * (p[r]! - p0[r]!);
        guess[r] = 0.5 * (nodeV[oa + r]! + nodeV[ob + r]!);
      }
      scratch.setStart(guess);
      this.interiorSolves[0] = this.interiorSolves[0]! + 1;
      if (scratch.solve(pMid, INTERIOR) < 0) {
        // by continuation from the panel's start (a converged node) to its middle
        const pA = this.pA,
          vA = this.vA,
          ta = a / n;
        for (let r = 0; r < m; r++) {
          pA[r] = p0[r]! + ta * (p[r]! - p0[r]!);
          vA[r] = nodeV[oa + r]!;
        }
        if (scratch.continueFrom(pA, vA, pMid, INTERIOR, INTERIOR_HOMOTOPY_DEPTH) < 0) {
          this.failed = true;
          return;
        }
      }
      const sv = scratch.v,
        si = scratch.i;
      for (let r = 0; r < m; r++) {
        nodeV[om + r] = sv[r]!;
        nodeI[om + r] = si[r]!;
      }
      // Simpson against trapezoid on [a, b]: the panel's mean, in volts at the ports
      const h = (b - a) / n;
      let err = 0;
      for (let r = 0; r < m; r++) {
        const ia = nodeI[oa + r]!,
          ib = nodeI[ob + r]!,
          im = nodeI[om + r]!;
        const e = w[r]! * Math.abs((ia + 4 * im + ib) / 6 - 0.5 * (ia + ib));
        if (e > err) err = e;
      }
      if (err < tol || b - a <= 2) {
        for (let r = 0; r < m; r++) iMean[r]! += (h * (nodeI[oa + r]! + 4 * nodeI[om + r]! + nodeI[ob + r]!)) / 6;
      } else {
        stack[top++] = mid;
        stack[top++] = b;
        stack[top++] = a;
        stack[top++] = mid;
      }
    }
  }
}
