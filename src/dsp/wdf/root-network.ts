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
// scattering matrix; tests/wdf.test.ts checks that both routes agree.
import { invert } from './linalg.ts';

/** A two-terminal branch between node indices (-1 is ground). */
export interface Branch {
  readonly a: number;
  readonly b: number;
}

export interface LinearNetworkSpec {
  readonly nodeCount: number;
  /** Resistors (and closed switches) absorbed into the root. */
  readonly conductances: readonly (Branch & { readonly siemens: number })[];
  /** Leaves: Thevenin source u_j behind `ohms`; ohms === 0 makes it an ideal voltage source. */
  readonly wavePorts: readonly (Branch & { readonly ohms: number })[];
  /** Nonlinear ports: current i_k flows from a through the device to b. */
  readonly nonlinearPorts: readonly Branch[];
  /** Conductance from every node to ground so that a node with no DC path stays defined. */
  readonly gminSiemens: number;
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

export function compileLinearNetwork(spec: LinearNetworkSpec): RootMatrices {
  const N = spec.nodeCount;
  const ideal = spec.wavePorts.map((p, j) => ({ p, j })).filter((x) => x.p.ohms === 0);
  const K = ideal.length;
  const D = N + K;
  const X = new Float64Array(D * D);
  const stamp = (a: number, b: number, g: number) => {
    if (a >= 0) X[a * D + a]! += g;
    if (b >= 0) X[b * D + b]! += g;
    if (a >= 0 && b >= 0) { X[a * D + b]! -= g; X[b * D + a]! -= g; }
  };
  for (let n = 0; n < N; n++) X[n * D + n]! += spec.gminSiemens;
  for (const c of spec.conductances) stamp(c.a, c.b, c.siemens);
  for (const p of spec.wavePorts) if (p.ohms > 0) stamp(p.a, p.b, 1 / p.ohms);
  ideal.forEach(({ p }, k) => {
    const row = N + k;
    if (p.a >= 0) { X[p.a * D + row] = 1; X[row * D + p.a] = 1; }
    if (p.b >= 0) { X[p.b * D + row] = -1; X[row * D + p.b] = -1; }
  });
  const Xi = invert(X, D);

  const nu = spec.wavePorts.length;
  const m = spec.nonlinearPorts.length;
  // Right-hand-side columns: one per leaf, one per nonlinear port.
  const idealRow = new Map<number, number>();
  ideal.forEach(({ j }, k) => idealRow.set(j, N + k));
  const Zu = new Float64Array(N * nu);
  const Zi = new Float64Array(N * m);
  const col = new Float64Array(D);
  const solveInto = (target: Float64Array, width: number, column: number) => {
    for (let n = 0; n < N; n++) {
      let s = 0;
      for (let r = 0; r < D; r++) s += Xi[n * D + r]! * col[r]!;
      target[n * width + column] = s;
    }
  };
  spec.wavePorts.forEach((p, j) => {
    col.fill(0);
    const row = idealRow.get(j);
    if (row !== undefined) col[row] = 1;
    else {
      if (p.a >= 0) col[p.a] = 1 / p.ohms;
      if (p.b >= 0) col[p.b] = -1 / p.ohms;
    }
    solveInto(Zu, nu, j);
  });
  spec.nonlinearPorts.forEach((p, k) => {
    col.fill(0);
    if (p.a >= 0) col[p.a] = -1;
    if (p.b >= 0) col[p.b] = 1;
    solveInto(Zi, m, k);
  });
  const branchRows = (branches: readonly Branch[], Z: Float64Array, width: number) => {
    const out = new Float64Array(branches.length * width);
    branches.forEach((br, r) => {
      for (let c = 0; c < width; c++) {
        const va = br.a >= 0 ? Z[br.a * width + c]! : 0;
        const vb = br.b >= 0 ? Z[br.b * width + c]! : 0;
        out[r * width + c] = va - vb;
      }
    });
    return out;
  };
  return {
    nodeCount: N, nu, m,
    E: branchRows(spec.nonlinearPorts, Zu, nu),
    F: branchRows(spec.nonlinearPorts, Zi, m),
    Pu: branchRows(spec.wavePorts, Zu, nu),
    Pi: branchRows(spec.wavePorts, Zi, m),
    Zu, Zi,
  };
}
