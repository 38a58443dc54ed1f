// The per-sample linear part of CircuitEngine as generated straight-line code.
//
// Per sample the engine (a) forms each capacitor's history source w_j from its state, (b) maps
// w and the input to the root's open-circuit port voltages p = pConst + P·[w; vin], and, after
// the root is solved for its currents i, (c) updates every capacitor's voltage
// v_j = cConst_j + C_j·[w; vin; i] and current, and (d) reads the output node the same way.
// These maps are dense for a connected circuit (every capacitor sees every source), so they are
// written out as one multiply-add per entry with constant indices into dense coefficient arrays:
// measured on pentode-triode at 8x (13 capacitors, 5 root ports, 336 multiply-adds), the CSR
// loops took 49 % of the profile. The coefficients are read from their arrays on every call,
// so a component change (which rewrites them) needs no new code. The code holds only numbers
// and indices computed here. Where code generation is forbidden (a Content Security Policy
// without 'unsafe-eval'), the same maps run as plain loops (loopLinearStage1/2).
import { generated } from '../wdf/newton-kernel.ts';

/** Sizes of one engine's maps. */
export interface LinearShape {
  /** Capacitors. */
  readonly nc: number;
  /** Root ports. */
  readonly m: number;
  /**
   * Per capacitor: integrated by BDF2 (history w = 4/3 v[n-1] - 1/3 v[n-2]) rather than the
   * trapezoidal rule (w = v[n-1] + R i[n-1]). Fixed for an engine's life, so each capacitor's
   * history is written out for its own rule; default all trapezoidal.
   */
  readonly bdf2?: readonly boolean[];
}

/**
 * Stage 1: writes x[0..nc] = [w; vin] and p, with vin = src[k]. Arguments: src, k (where the
 * input sample is: no double crosses the call, see below), capV, capVPrev, capI, capR (capacitor
 * state and port resistances), Pd (m × (nc+1) row-major), pConst, x, p.
 */
export type LinearStage1 = (
  src: Float64Array,
  k: number,
  capV: Float64Array,
  capVPrev: Float64Array,
  capI: Float64Array,
  capR: Float64Array,
  Pd: Float64Array,
  pConst: Float64Array,
  x: Float64Array,
  p: Float64Array,
) => void;

/**
 * Stage 2: copies i into x[nc+1..], updates capV and, per rule, capI (trapezoidal) or capVPrev
 * (BDF2), and writes the output volts
 * into dst[j] (0 if not finite). Arguments: i, x, Cd (nc × (nc+1+m) row-major), cConst, invCapR,
 * capV, capVPrev, capI, Od (nc+1+m), oConst (oConst[0] is the output's constant part), dst, j.
 *
 * Inputs and outputs go through arrays, not number arguments or a number result: V8 boxes a
 * double that crosses a call it does not inline (16 bytes each), and these calls are not inlined.
 */
export type LinearStage2 = (
  i: Float64Array,
  x: Float64Array,
  Cd: Float64Array,
  cConst: Float64Array,
  invCapR: Float64Array,
  capV: Float64Array,
  capVPrev: Float64Array,
  capI: Float64Array,
  Od: Float64Array,
  oConst: Float64Array,
  dst: Float64Array,
  j: number,
) => void;

function checkShape(s: LinearShape): void {
  if (!(Number.isInteger(s.nc) && s.nc >= 0 && s.nc <= 512 && Number.isInteger(s.m) && s.m >= 0 && s.m <= 64)) {
    throw new Error(`linear kernel: unsupported size (${s.nc} capacitors, ${s.m} root ports)`);
  }
  if (s.bdf2 && s.bdf2.length !== s.nc) throw new Error(`linear kernel: ${s.bdf2.length} integration flags for ${s.nc} capacitors`);
}

export function compileLinearStage1(s: LinearShape): LinearStage1 {
  checkShape(s);
  const { nc, m } = s,
    nd = nc + 1,
    L: string[] = [];
  for (let j = 0; j < nc; j++) {
    // BDF2 history 4/3 v[n-1] - 1/3 v[n-2]; trapezoidal (WDF capacitor, b[n] = a[n-1]) v + R i
    L.push(s.bdf2?.[j] ? `const x${j} = ${4 / 3} * capV[${j}] - ${1 / 3} * capVPrev[${j}];` : `const x${j} = capV[${j}] + capR[${j}] * capI[${j}];`);
    L.push(`x[${j}] = x${j};`);
  }
  L.push(`const x${nc} = src[k]; x[${nc}] = x${nc};`);
  for (let r = 0; r < m; r++) {
    const t = [`pConst[${r}]`];
    for (let c = 0; c < nd; c++) t.push(`Pd[${r * nd + c}] * x${c}`);
    L.push(`p[${r}] = ${t.join(' + ')};`);
  }
  // a named function (profiles show it by name rather than as anonymous)
  return (
    generated<LinearStage1>(`return function linearStage1(src, k, capV, capVPrev, capI, capR, Pd, pConst, x, p) {\n${L.join('\n')}\n};`) ?? loopLinearStage1(s)
  );
}

/** compileLinearStage1's computation as loops (no code generation, no allocation per call). */
export function loopLinearStage1(s: LinearShape): LinearStage1 {
  checkShape(s);
  const { nc, m } = s,
    nd = nc + 1,
    bdf2 = Uint8Array.from({ length: nc }, (_, j) => (s.bdf2?.[j] ? 1 : 0));
  return (src, k, capV, capVPrev, capI, capR, Pd, pConst, x, p) => {
    for (let j = 0; j < nc; j++) x[j] = bdf2[j] ? (4 / 3) * capV[j]! - (1 / 3) * capVPrev[j]! : capV[j]! + capR[j]! * capI[j]!;
    x[nc] = src[k]!;
    for (let r = 0; r < m; r++) {
      let acc = pConst[r]!;
      for (let c = 0; c < nd; c++) acc += Pd[r * nd + c]! * x[c]!;
      p[r] = acc;
    }
  };
}

export function compileLinearStage2(s: LinearShape): LinearStage2 {
  checkShape(s);
  const { nc, m } = s,
    nd = nc + 1,
    nx = nd + m,
    L: string[] = [];
  for (let c = 0; c < nd; c++) L.push(`const x${c} = x[${c}];`);
  for (let c = 0; c < m; c++) L.push(`const x${nd + c} = i[${c}]; x[${nd + c}] = x${nd + c};`);
  for (let j = 0; j < nc; j++) {
    const t = [`cConst[${j}]`];
    for (let c = 0; c < nx; c++) t.push(`Cd[${j * nx + c}] * x${c}`);
    L.push(`{ const v = ${t.join(' + ')};`);
    L.push(s.bdf2?.[j] ? `  capVPrev[${j}] = capV[${j}]; capV[${j}] = v; }` : `  capI[${j}] = (v - x${j}) * invCapR[${j}]; capV[${j}] = v; }`);
  }
  const o = ['oConst[0]'];
  for (let c = 0; c < nx; c++) o.push(`Od[${c}] * x${c}`);
  L.push(`const out = ${o.join(' + ')};`);
  L.push('dst[j] = out - out === 0 ? out : 0;');
  return (
    generated<LinearStage2>(`return function linearStage2(i, x, Cd, cConst, invCapR, capV, capVPrev, capI, Od, oConst, dst, j) {\n${L.join('\n')}\n};`) ??
    loopLinearStage2(s)
  );
}

/** compileLinearStage2's computation as loops (no code generation, no allocation per call). */
export function loopLinearStage2(s: LinearShape): LinearStage2 {
  checkShape(s);
  const { nc, m } = s,
    nd = nc + 1,
    nx = nd + m,
    bdf2 = Uint8Array.from({ length: nc }, (_, j) => (s.bdf2?.[j] ? 1 : 0));
  return (i, x, Cd, cConst, invCapR, capV, capVPrev, capI, Od, oConst, dst, j) => {
    for (let c = 0; c < m; c++) x[nd + c] = i[c]!;
    for (let q = 0; q < nc; q++) {
      let v = cConst[q]!;
      for (let c = 0; c < nx; c++) v += Cd[q * nx + c]! * x[c]!;
      if (bdf2[q]) capVPrev[q] = capV[q]!;
      else capI[q] = (v - x[q]!) * invCapR[q]!;
      capV[q] = v;
    }
    let out = oConst[0]!;
    for (let c = 0; c < nx; c++) out += Od[c]! * x[c]!;
    dst[j] = out - out === 0 ? out : 0;
  };
}
