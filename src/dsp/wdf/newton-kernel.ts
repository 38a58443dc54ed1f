// One Newton step of the root equation g(v) = v - p - F i(v) = 0, generated as straight-line
// code for one root's size m and Jacobian sparsity (NewtonRoot's generic loops cost ~0.5 us per
// iteration at m = 5; this kernel keeps every operand in a local).
//
// The step solves J·δ = -g with J = I - F·D, D = d i / d v (sparse, pattern (nzRow, nzCol)),
// by Gaussian elimination without row exchanges. That is safe only while each pivot is not
// small against the entries below it, so the kernel checks |pivot| >= PIVOT_RATIO · max|below|
// (threshold pivoting, Golub & Van Loan, "Matrix Computations", 4th ed., sec. 3.4, from memory)
// and returns false otherwise: the caller then takes its partially pivoted LU for that
// iteration. F is read from its array on every call, so a component change needs no new kernel.
//
// The code is generated once per circuit (when the engine is built) with `new Function`; it
// only ever contains numbers and array indices computed here, never text from a design. Where
// code generation is forbidden (a Content Security Policy without 'unsafe-eval' makes
// `new Function` throw an EvalError), the same computation runs as plain loops (loopNewtonStep,
// loopCurrentUpdate): the same operations in the same order, slower.

/** Whether `new Function` may be used here (false under a CSP without 'unsafe-eval'); tried once. */
let codegenAllowed: boolean | null = null;

const kernelCache = new Map<string, unknown>();
/** Distinct kernel sources kept (a few per circuit shape); beyond it the cache starts over. */
const KERNEL_CACHE_SIZE = 64;

/**
 * Run `source` (a function body returning the kernel), or return null when code generation is
 * forbidden. Compiled once per distinct source: engines of the same shape (every reload, tube
 * change or quality change of a design) share one function, so a new engine starts with code
 * the JIT has already optimised instead of interpreting fresh code on the audio thread. The
 * kernels hold no state (everything comes in through their arguments).
 */
export function generated<T>(source: string): T | null {
  if (codegenAllowed === false) return null;
  // (after setCodegenAllowed(null) the first kernel probes again, cached or not)
  const known = codegenAllowed === true ? kernelCache.get(source) : undefined;
  if (known !== undefined) return known as T;
  try {
    const f = new Function(source)() as T;
    codegenAllowed = true;
    if (kernelCache.size >= KERNEL_CACHE_SIZE) kernelCache.clear();
    kernelCache.set(source, f);
    return f;
  } catch (e) {
    // EvalError: the page's Content Security Policy forbids code generation
    if (e instanceof EvalError || (e instanceof Error && /unsafe-eval|Content Security Policy|code generation/i.test(e.message))) {
      codegenAllowed = false;
      return null;
    }
    throw e;
  }
}

/** For tests: forget the probe's result (null) or pretend code generation is forbidden (false). */
export function setCodegenAllowed(allowed: boolean | null): void {
  codegenAllowed = allowed;
}

/**
 * Writes δ into r[0..m-1] and the squared residual norm sum g_k^2 into r[m], and returns true; or returns false (r
 * unspecified) when a pivot fails the test. Arguments: F (m·m row-major), p, v, i (length m),
 * d (nnz values in pattern order), r (length m + 1).
 */
export type NewtonStepKernel = (F: Float64Array, p: Float64Array, v: Float64Array, i: Float64Array, d: Float64Array, r: Float64Array) => boolean;

/** Smallest accepted |pivot| / max |entry below it| before falling back to row exchanges. */
export const PIVOT_RATIO = 1e-3;

export function compileNewtonStep(m: number, nzRow: Int32Array, nzCol: Int32Array): NewtonStepKernel {
  if (!(Number.isInteger(m) && m >= 0 && m <= 32)) throw new Error(`compileNewtonStep: root size must be 0-32, got ${m}`);
  if (nzRow.length !== nzCol.length) throw new Error('compileNewtonStep: pattern rows and columns differ in length');
  if (m === 0)
    return (_F, _p, _v, _i, _d, r) => {
      r[0] = 0;
      return true;
    };
  const L: string[] = [];
  for (let c = 0; c < m; c++) L.push(`const i${c} = i[${c}];`);
  for (let z = 0; z < nzRow.length; z++) L.push(`const d${z} = d[${z}];`);
  // residual (negated): r = p - v + F i
  for (let row = 0; row < m; row++) {
    const terms = [`p[${row}] - v[${row}]`];
    for (let c = 0; c < m; c++) terms.push(`F[${row * m + c}] * i${c}`);
    L.push(`let r${row} = ${terms.join(' + ')};`);
  }
  L.push(`r[${m}] = ${Array.from({ length: m }, (_, k) => `r${k} * r${k}`).join(' + ')};`);
  // J[row][c] = [row == c] - sum over pattern entries z in column c of F[row][nzRow[z]] · d_z
  for (let row = 0; row < m; row++) {
    for (let c = 0; c < m; c++) {
      const terms: string[] = [];
      for (let z = 0; z < nzRow.length; z++) if (nzCol[z] === c) terms.push(`F[${row * m + nzRow[z]!}] * d${z}`);
      const diag = row === c ? '1' : '0';
      L.push(`let a${row}_${c} = ${terms.length ? `${diag} - (${terms.join(' + ')})` : diag};`);
    }
  }
  // forward elimination without exchanges, threshold-checked
  for (let k = 0; k < m; k++) {
    if (k < m - 1) {
      const below: string[] = [];
      for (let row = k + 1; row < m; row++) below.push(`Math.abs(a${row}_${k})`);
      L.push(`if (!(Math.abs(a${k}_${k}) >= ${PIVOT_RATIO} * Math.max(${below.join(', ')}))) return false;`);
    }
    L.push(`if (!(Math.abs(a${k}_${k}) > 1e-300)) return false;`);
    L.push(`const q${k} = 1 / a${k}_${k};`);
    for (let row = k + 1; row < m; row++) {
      L.push(`{ const f = a${row}_${k} * q${k};`);
      for (let c = k + 1; c < m; c++) L.push(`  a${row}_${c} -= f * a${k}_${c};`);
      L.push(`  r${row} -= f * r${k}; }`);
    }
  }
  // back substitution
  for (let k = m - 1; k >= 0; k--) {
    const terms: string[] = [];
    for (let c = k + 1; c < m; c++) terms.push(` - a${k}_${c} * r${c}`);
    L.push(`r${k} = (r${k}${terms.join('')}) * q${k};`);
  }
  for (let k = 0; k < m; k++) L.push(`r[${k}] = r${k};`);
  L.push('return true;');
  return generated<NewtonStepKernel>(`return function newtonStep(F, p, v, i, d, r) {\n${L.join('\n')}\n};`) ?? loopNewtonStep(m, nzRow, nzCol);
}

/** compileNewtonStep's computation as loops over preallocated scratch (no code generation, no allocation per call). */
export function loopNewtonStep(m: number, nzRow: Int32Array, nzCol: Int32Array): NewtonStepKernel {
  const a = new Float64Array(m * m),
    x = new Float64Array(m),
    q = new Float64Array(m),
    nnz = nzRow.length;
  return (F, p, v, i, d, r) => {
    let g = 0;
    for (let row = 0; row < m; row++) {
      let s = p[row]! - v[row]!;
      for (let c = 0; c < m; c++) s += F[row * m + c]! * i[c]!;
      x[row] = s;
      g += s * s;
    }
    r[m] = g;
    for (let row = 0; row < m; row++) {
      for (let c = 0; c < m; c++) {
        let t = 0;
        for (let z = 0; z < nnz; z++) if (nzCol[z] === c) t += F[row * m + nzRow[z]!]! * d[z]!;
        a[row * m + c] = (row === c ? 1 : 0) - t;
      }
    }
    for (let k = 0; k < m; k++) {
      const piv = a[k * m + k]!;
      let below = 0;
      for (let row = k + 1; row < m; row++) below = Math.max(below, Math.abs(a[row * m + k]!));
      if (k < m - 1 && !(Math.abs(piv) >= PIVOT_RATIO * below)) return false;
      if (!(Math.abs(piv) > 1e-300)) return false;
      const inv = 1 / piv;
      q[k] = inv;
      for (let row = k + 1; row < m; row++) {
        const f = a[row * m + k]! * inv;
        for (let c = k + 1; c < m; c++) a[row * m + c]! -= f * a[k * m + c]!;
        x[row]! -= f * x[k]!;
      }
    }
    for (let k = m - 1; k >= 0; k--) {
      let s = x[k]!;
      for (let c = k + 1; c < m; c++) s -= a[k * m + c]! * x[c]!;
      x[k] = s * q[k]!;
    }
    for (let k = 0; k < m; k++) r[k] = x[k]!;
    return true;
  };
}

/** i += D·δ (D sparse in the pattern's order, δ = r[0..m-1]): the currents after an accepted step, to first order. */
export type CurrentUpdateKernel = (i: Float64Array, d: Float64Array, r: Float64Array) => void;

export function compileCurrentUpdate(m: number, nzRow: Int32Array, nzCol: Int32Array): CurrentUpdateKernel {
  if (!(Number.isInteger(m) && m >= 0 && m <= 32)) throw new Error(`compileCurrentUpdate: root size must be 0-32, got ${m}`);
  if (nzRow.length !== nzCol.length) throw new Error('compileCurrentUpdate: pattern rows and columns differ in length');
  const L: string[] = [];
  for (let row = 0; row < m; row++) {
    // one local per row, added to in pattern order (the same rounding as the loop it replaces)
    const terms: string[] = [];
    for (let z = 0; z < nzRow.length; z++) if (nzRow[z] === row) terms.push(`s += d[${z}] * r[${nzCol[z]!}];`);
    if (terms.length) L.push(`{ let s = i[${row}]; ${terms.join(' ')} i[${row}] = s; }`);
  }
  return generated<CurrentUpdateKernel>(`return function currentUpdate(i, d, r) {\n${L.join('\n')}\n};`) ?? loopCurrentUpdate(nzRow, nzCol);
}

/** compileCurrentUpdate's computation as a loop (no code generation). */
export function loopCurrentUpdate(nzRow: Int32Array, nzCol: Int32Array): CurrentUpdateKernel {
  const nnz = nzRow.length;
  return (i, d, r) => {
    for (let z = 0; z < nnz; z++) i[nzRow[z]!]! += d[z]! * r[nzCol[z]!]!;
  };
}
