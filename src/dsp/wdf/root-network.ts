// The linear part of a circuit seen from its nonlinear root.
//
// Every capacitor and every source is a wave one-port (leaf) whose reflected wave b is known at
// the start of a sample (capacitor: trapezoidal history; resistive source: its EMF). Seen from
// the network, such a leaf is a Thevenin source b in series with its port resistance R (from
// b = v - R i, current i into the leaf). Resistors are absorbed into the root adaptor. The
// nonlinear tube ports are current-controlled from the network's point of view.
//
// Solving the root adaptor's modified nodal analysis for the leaves' waves u and the nonlinear
// port currents i gives, linearly,
//   v_C = E u + F i             (nonlinear port voltages)
//   v_L = Pu u + Pi i           (leaf port voltages; the wave sent back to leaf j is a_j = 2 v_j - b_j)
// which is the E/F/M/N form of Werner, Nangia, Smith & Abel, "Resolving wave digital filters
// with multiple/multiport nonlinearities", DAFx-15, with M = 2 Pu - I and N = 2 Pi. Here the
// matrices are obtained from the nodal analysis directly rather than through the root's
// scattering matrix; tests/wdf.test.ts checks the engine built on them against a classical
// adaptor tree (tests/reference/wdf-elements.ts) on a series-parallel circuit.
//
// Value changes at run time (a pot being turned) recompile the matrices on the audio thread, so
// LinearNetworkCompiler is built once per topology and owns every workspace: compile() writes
// into preallocated RootMatrices and allocates nothing.
import { invertInto } from './linalg.ts';

/** A two-terminal branch between node indices (-1 is ground). */
export interface Branch {
  readonly a: number;
  readonly b: number;
}

export interface RootMatrices {
  readonly nodeCount: number;
  /** Number of leaves (wave ports). */
  readonly nu: number;
  /** Number of nonlinear ports. */
  readonly m: number;
  /** m x nu */ readonly E: Float64Array;
  /** m x m */ readonly F: Float64Array;
  /** nu x nu */ readonly Pu: Float64Array;
  /** nu x m */ readonly Pi: Float64Array;
  /** node voltages: nodeCount x nu */ readonly Zu: Float64Array;
  /** node voltages: nodeCount x m */ readonly Zi: Float64Array;
}

/**
 * The structure of a linear network, without its values: compile() takes the conductances and
 * the wave-port resistances as arrays indexed like `conductances` and `wavePorts`.
 */
export interface LinearTopology {
  readonly nodeCount: number;
  readonly conductances: readonly Branch[];
  readonly wavePorts: readonly Branch[];
  /** idealPorts[j]: wave port j is an ideal voltage source (its resistance is always 0). */
  readonly idealPorts: readonly boolean[];
  readonly nonlinearPorts: readonly Branch[];
  readonly gminSiemens: number;
}

/**
 * Compiles a fixed topology for any values without allocating. The operations (and so the
 * results, bit for bit) are those of the original one-shot compilation: the MNA matrix is
 * inverted by LU with partial pivoting (only the inverse's columns that a right-hand side
 * touches are formed) and the node-voltage blocks are the inverse times the port columns.
 */
export class LinearNetworkCompiler {
  readonly nodeCount: number;
  /** Number of wave ports (leaves). */
  readonly nu: number;
  /** Number of nonlinear ports. */
  readonly m: number;
  /** MNA dimension: nodes plus one current unknown per ideal source. */
  readonly dim: number;
  private readonly gminSiemens: number;
  private readonly condA: Int32Array;
  private readonly condB: Int32Array;
  private readonly portA: Int32Array;
  private readonly portB: Int32Array;
  /** MNA row of an ideal wave port's current, -1 for a resistive one. */
  private readonly idealRow: Int32Array;
  private readonly nlA: Int32Array;
  private readonly nlB: Int32Array;
  /** MNA matrix, factorised in place. */
  private readonly lu: Float64Array;
  private readonly inv: Float64Array;
  private readonly piv: Int32Array;
  private readonly col: Float64Array;
  private readonly tmp: Float64Array;
  /** Columns of the inverse that some right-hand side needs. */
  private readonly needed: Uint8Array;

  constructor(t: LinearTopology) {
    const N = t.nodeCount;
    if (t.idealPorts.length !== t.wavePorts.length) throw new Error('idealPorts must have one entry per wave port');
    const check = (br: Branch) => {
      for (const n of [br.a, br.b]) if (!(Number.isInteger(n) && n >= -1 && n < N)) throw new Error(`node index ${n} out of range`);
    };
    [...t.conductances, ...t.wavePorts, ...t.nonlinearPorts].forEach(check);
    this.nodeCount = N;
    this.nu = t.wavePorts.length;
    this.m = t.nonlinearPorts.length;
    this.gminSiemens = t.gminSiemens;
    this.condA = Int32Array.from(t.conductances, (c) => c.a);
    this.condB = Int32Array.from(t.conductances, (c) => c.b);
    this.portA = Int32Array.from(t.wavePorts, (p) => p.a);
    this.portB = Int32Array.from(t.wavePorts, (p) => p.b);
    this.nlA = Int32Array.from(t.nonlinearPorts, (p) => p.a);
    this.nlB = Int32Array.from(t.nonlinearPorts, (p) => p.b);
    this.idealRow = new Int32Array(this.nu).fill(-1);
    let K = 0;
    t.idealPorts.forEach((ideal, j) => {
      if (ideal) this.idealRow[j] = N + K++;
    });
    const D = N + K;
    this.dim = D;
    this.lu = new Float64Array(D * D);
    this.inv = new Float64Array(D * D);
    this.piv = new Int32Array(D);
    this.col = new Float64Array(D);
    this.tmp = new Float64Array(D);
    this.needed = new Uint8Array(D);
    const need = (n: number) => {
      if (n >= 0) this.needed[n] = 1;
    };
    for (let j = 0; j < this.nu; j++) {
      const row = this.idealRow[j]!;
      if (row >= 0) need(row);
      else {
        need(this.portA[j]!);
        need(this.portB[j]!);
      }
    }
    for (let k = 0; k < this.m; k++) {
      need(this.nlA[k]!);
      need(this.nlB[k]!);
    }
  }

  /** Storage of the right sizes for compile(). */
  createMatrices(): RootMatrices {
    const N = this.nodeCount,
      nu = this.nu,
      m = this.m;
    return {
      nodeCount: N,
      nu,
      m,
      E: new Float64Array(m * nu),
      F: new Float64Array(m * m),
      Pu: new Float64Array(nu * nu),
      Pi: new Float64Array(nu * m),
      Zu: new Float64Array(N * nu),
      Zi: new Float64Array(N * m),
    };
  }

  /**
   * Compile for these values into `out` (from createMatrices; its arrays are overwritten in
   * place, the objects stay). `siemens[k]` is conductance k (0: left out, e.g. an open switch),
   * `wavePortOhms[j]` the resistance of wave port j (0 exactly for the ideal ones). No
   * allocation; throws SingularMatrixError (before writing `out`) if the network is singular.
   */
  compile(siemens: Float64Array, wavePortOhms: Float64Array, out: RootMatrices): void {
    const N = this.nodeCount,
      nu = this.nu,
      m = this.m,
      D = this.dim,
      X = this.lu;
    const nc = this.condA.length;
    if (siemens.length !== nc || wavePortOhms.length !== nu) throw new Error('value arrays do not match the topology');
    if (out.nodeCount !== N || out.nu !== nu || out.m !== m) throw new Error('output matrices do not match the topology');
    X.fill(0);
    for (let n = 0; n < N; n++) X[n * D + n]! += this.gminSiemens;
    for (let k = 0; k < nc; k++) {
      const g = siemens[k]!;
      if (g !== 0) this.stamp(this.condA[k]!, this.condB[k]!, g);
    }
    for (let j = 0; j < nu; j++) {
      const ohms = wavePortOhms[j]!;
      if ((ohms === 0) !== this.idealRow[j]! >= 0) throw new Error(`wave port ${j}: a resistance of 0 (ideal source) cannot change at run time`);
      if (ohms > 0) this.stamp(this.portA[j]!, this.portB[j]!, 1 / ohms);
    }
    for (let j = 0; j < nu; j++) {
      const row = this.idealRow[j]!;
      if (row < 0) continue;
      const a = this.portA[j]!,
        b = this.portB[j]!;
      if (a >= 0) {
        X[a * D + row] = 1;
        X[row * D + a] = 1;
      }
      if (b >= 0) {
        X[b * D + row] = -1;
        X[row * D + b] = -1;
      }
    }
    const Xi = this.inv;
    invertInto(X, D, Xi, this.piv, this.col, this.tmp, this.needed);

    // Node voltages per unit right-hand side: a port's column has at most two non-zeros
    // (+g at a, -g at b; an ideal source: 1 at its row), so Xi times it is at most two terms.
    const Zu = out.Zu,
      Zi = out.Zi;
    for (let j = 0; j < nu; j++) {
      const row = this.idealRow[j]!;
      const a = this.portA[j]!,
        b = this.portB[j]!;
      const g = row >= 0 ? 0 : 1 / wavePortOhms[j]!;
      for (let n = 0; n < N; n++) {
        let s = 0;
        if (row >= 0) s += Xi[n * D + row]!;
        else {
          if (a >= 0 && a !== b) s += Xi[n * D + a]! * g;
          if (b >= 0) s += Xi[n * D + b]! * -g;
        }
        Zu[n * nu + j] = s;
      }
    }
    for (let k = 0; k < m; k++) {
      const a = this.nlA[k]!,
        b = this.nlB[k]!;
      for (let n = 0; n < N; n++) {
        let s = 0;
        if (a >= 0 && a !== b) s += Xi[n * D + a]! * -1;
        if (b >= 0) s += Xi[n * D + b]!;
        Zi[n * m + k] = s;
      }
    }
    branchRows(this.nlA, this.nlB, Zu, nu, out.E);
    branchRows(this.nlA, this.nlB, Zi, m, out.F);
    branchRows(this.portA, this.portB, Zu, nu, out.Pu);
    branchRows(this.portA, this.portB, Zi, m, out.Pi);
  }

  private stamp(a: number, b: number, g: number): void {
    const X = this.lu,
      D = this.dim;
    if (a >= 0) X[a * D + a]! += g;
    if (b >= 0) X[b * D + b]! += g;
    if (a >= 0 && b >= 0) {
      X[a * D + b]! -= g;
      X[b * D + a]! -= g;
    }
  }
}

/** Branch voltages (v_a - v_b) of the node-voltage rows Z (nodes x width) into out (branches x width). */
function branchRows(A: Int32Array, B: Int32Array, Z: Float64Array, width: number, out: Float64Array): void {
  for (let r = 0; r < A.length; r++) {
    const a = A[r]!,
      b = B[r]!;
    for (let c = 0; c < width; c++) {
      const va = a >= 0 ? Z[a * width + c]! : 0;
      const vb = b >= 0 ? Z[b * width + c]! : 0;
      out[r * width + c] = va - vb;
    }
  }
}
