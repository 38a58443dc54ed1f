// Small dense linear algebra on row-major Float64Array matrices (circuits here have < 64 nodes).

export class SingularMatrixError extends Error {
  override name = 'SingularMatrixError';
}

/** In-place LU factorisation with partial pivoting. Returns the pivot permutation. */
export function luFactor(a: Float64Array, n: number, piv: Int32Array = new Int32Array(n)): Int32Array {
  for (let i = 0; i < n; i++) piv[i] = i;
  for (let k = 0; k < n; k++) {
    let p = k;
    let max = Math.abs(a[k * n + k]!);
    for (let i = k + 1; i < n; i++) {
      const v = Math.abs(a[i * n + k]!);
      if (v > max) {
        max = v;
        p = i;
      }
    }
    if (!(max > 1e-300)) throw new SingularMatrixError(`matrix is singular at column ${k}`);
    if (p !== k) {
      for (let j = 0; j < n; j++) {
        const t = a[k * n + j]!;
        a[k * n + j] = a[p * n + j]!;
        a[p * n + j] = t;
      }
      const t = piv[k]!;
      piv[k] = piv[p]!;
      piv[p] = t;
    }
    const d = a[k * n + k]!;
    for (let i = k + 1; i < n; i++) {
      const f = a[i * n + k]! / d;
      a[i * n + k] = f;
      if (f !== 0) for (let j = k + 1; j < n; j++) a[i * n + j]! -= f * a[k * n + j]!;
    }
  }
  return piv;
}

/** Solve LU x = P b in place in `b` (b overwritten by x). `tmp` must have length n. */
export function luSolve(lu: Float64Array, piv: Int32Array, n: number, b: Float64Array, tmp: Float64Array): void {
  for (let i = 0; i < n; i++) tmp[i] = b[piv[i]!]!;
  for (let i = 0; i < n; i++) {
    let s = tmp[i]!;
    for (let j = 0; j < i; j++) s -= lu[i * n + j]! * tmp[j]!;
    tmp[i] = s;
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = tmp[i]!;
    for (let j = i + 1; j < n; j++) s -= lu[i * n + j]! * b[j]!;
    b[i] = s / lu[i * n + i]!;
  }
}

/**
 * Inverse of the n x n matrix `a` into `inv` without allocation: `a` is overwritten by its LU
 * factors, `piv` (length n), `col` and `tmp` (length n each) are workspaces. With `columns`,
 * only the columns j with columns[j] !== 0 are written (the others are left as they are).
 * Throws SingularMatrixError.
 */
export function invertInto(a: Float64Array, n: number, inv: Float64Array, piv: Int32Array, col: Float64Array, tmp: Float64Array, columns?: Uint8Array): void {
  luFactor(a, n, piv);
  for (let j = 0; j < n; j++) {
    if (columns !== undefined && columns[j] === 0) continue;
    col.fill(0);
    col[j] = 1;
    luSolve(a, piv, n, col, tmp);
    for (let i = 0; i < n; i++) inv[i * n + j] = col[i]!;
  }
}

/**
 * Allocation-free LU with partial pivoting for the per-sample Newton system (PA = LU, L unit
 * lower, both stored in `a`). Returns false if singular. Row swaps are applied to whole rows,
 * `piv[k]` is the row chosen at step k (LAPACK getrf convention).
 */
export function luFactorInPlace(a: Float64Array, n: number, piv: Int32Array): boolean {
  for (let k = 0; k < n; k++) {
    let p = k;
    const kn = k * n;
    let max = Math.abs(a[kn + k]!);
    for (let i = k + 1; i < n; i++) {
      const v = Math.abs(a[i * n + k]!);
      if (v > max) {
        max = v;
        p = i;
      }
    }
    if (!(max > 1e-300)) return false;
    piv[k] = p;
    if (p !== k) {
      const pn = p * n;
      for (let c = 0; c < n; c++) {
        const t = a[kn + c]!;
        a[kn + c] = a[pn + c]!;
        a[pn + c] = t;
      }
    }
    const inv = 1 / a[kn + k]!;
    for (let i = k + 1; i < n; i++) {
      const in_ = i * n;
      const f = a[in_ + k]! * inv;
      a[in_ + k] = f;
      if (f === 0) continue;
      for (let c = k + 1; c < n; c++) a[in_ + c]! -= f * a[kn + c]!;
    }
  }
  return true;
}

/** Solve with luFactorInPlace's factors: b overwritten by x. No allocation. */
export function luSolveInPlace(lu: Float64Array, piv: Int32Array, n: number, b: Float64Array): void {
  for (let k = 0; k < n; k++) {
    const p = piv[k]!;
    if (p !== k) {
      const t = b[k]!;
      b[k] = b[p]!;
      b[p] = t;
    }
  }
  for (let i = 1; i < n; i++) {
    let s = b[i]!;
    const in_ = i * n;
    for (let j = 0; j < i; j++) s -= lu[in_ + j]! * b[j]!;
    b[i] = s;
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i]!;
    const in_ = i * n;
    for (let j = i + 1; j < n; j++) s -= lu[in_ + j]! * b[j]!;
    b[i] = s / lu[in_ + i]!;
  }
}
