// Tube equations exactly as in the netlist interchange spec (netlist-v1), with analytic
// derivatives for the Newton solver. All voltages are relative to the cathode.

/** softplus(z) = ln(1 + e^z), evaluated without overflow. */
export function softplus(z: number): number {
  if (z > 35) return z;
  if (z < -35) return Math.exp(z);
  return Math.log1p(Math.exp(z));
}

/** d softplus / dz = logistic(z). */
export function logistic(z: number): number {
  if (z >= 0) return 1 / (1 + Math.exp(-z));
  const e = Math.exp(z);
  return e / (1 + e);
}

/** softplus(z) and its derivative logistic(z) from one exponential; result in out[0], out[1]. */
export function softplusAndLogistic(z: number, out: Float64Array): void {
  if (z > 35) {
    out[0] = z;
    out[1] = 1;
    return;
  }
  const e = Math.exp(-Math.abs(z));
  const l = Math.log1p(e);
  if (z >= 0) {
    out[0] = z + l;
    out[1] = 1 / (1 + e);
  } else {
    out[0] = l;
    out[1] = e / (1 + e);
  }
}

const spl = new Float64Array(2);

/** x^y for x > 0 by exp(y·ln x): about four times faster than Math.pow in V8 (bench/engine). */
function powPositive(x: number, y: number): number {
  return Math.exp(y * Math.log(x));
}

export interface KorenTriodeParams {
  readonly mu: number;
  readonly ex: number;
  readonly kg1: number;
  readonly kp: number;
  readonly kvb: number;
}

export interface KorenPentodeParams extends KorenTriodeParams {
  readonly kg2: number;
}

export interface GridCurrentParams {
  /** Dempwolf-Zolzer Gg, amperes. */
  readonly gg: number;
  /** Dempwolf-Zolzer Cg, 1/volts. */
  readonly cg: number;
  /** Dempwolf-Zolzer xi (exponent). */
  readonly xi: number;
  /** Dempwolf-Zolzer Ig0, amperes (constant leakage term). */
  readonly ig0: number;
}

/** Output slot for a current and its partial derivatives. */
export interface CurrentAndSlopes {
  amps: number;
  /** d amps / d Vgk */
  dVgk: number;
  /** d amps / d Vpk (triode, pentode plate) */
  dVpk: number;
  /** d amps / d Vsk (pentode) */
  dVsk: number;
}

export function newSlopes(): CurrentAndSlopes {
  return { amps: 0, dVgk: 0, dVpk: 0, dVsk: 0 };
}

/**
 * Koren triode plate current (Koren, "Improved vacuum tube models for SPICE simulations",
 * Glass Audio 8(5), 1996): E1 = (Vpk/kp)·softplus(kp·(1/mu + Vgk/sqrt(kvb + Vpk²))),
 * Ip = 2·E1^ex/kg1 for Vpk > 0 and E1 > 0. `scale` multiplies the current (tube sample).
 */
export function korenTriode(p: KorenTriodeParams, vgk: number, vpk: number, scale: number, out: CurrentAndSlopes): void {
  out.dVsk = 0;
  if (!(vpk > 0)) {
    out.amps = 0;
    out.dVgk = 0;
    out.dVpk = 0;
    return;
  }
  const s = Math.sqrt(p.kvb + vpk * vpk);
  const z = p.kp * (1 / p.mu + vgk / s);
  softplusAndLogistic(z, spl);
  const sp = spl[0]!,
    sig = spl[1]!;
  const e1 = (vpk / p.kp) * sp;
  if (!(e1 > 0)) {
    out.amps = 0;
    out.dVgk = 0;
    out.dVpk = 0;
    return;
  }
  const k = (2 * scale) / p.kg1;
  const pw = powPositive(e1, p.ex - 1); // E1^(ex-1)
  out.amps = k * pw * e1;
  const dIdE = k * p.ex * pw;
  const dEdg = (vpk * sig) / s;
  const dEdp = sp / p.kp - (sig * vgk * vpk * vpk) / (s * s * s);
  out.dVgk = dIdE * dEdg;
  out.dVpk = dIdE * dEdp;
}

/**
 * Koren pentode plate current (same source, netlist-v1 form):
 * E1 = (Vsk/kp)·softplus(kp·(1/mu + Vgk/Vsk)), Ip = 2·E1^ex/kg1·atan(Vpk/kvb).
 */
export function korenPentodePlate(p: KorenPentodeParams, vgk: number, vpk: number, vsk: number, scale: number, out: CurrentAndSlopes): void {
  if (!(vsk > 0) || !(vpk > 0)) {
    out.amps = 0;
    out.dVgk = 0;
    out.dVpk = 0;
    out.dVsk = 0;
    return;
  }
  const z = p.kp * (1 / p.mu + vgk / vsk);
  softplusAndLogistic(z, spl);
  const sp = spl[0]!,
    sig = spl[1]!;
  const e1 = (vsk / p.kp) * sp;
  if (!(e1 > 0)) {
    out.amps = 0;
    out.dVgk = 0;
    out.dVpk = 0;
    out.dVsk = 0;
    return;
  }
  const k = (2 * scale) / p.kg1;
  const pw = powPositive(e1, p.ex - 1);
  const base = k * pw * e1;
  const r = vpk / p.kvb;
  const at = Math.atan(r);
  out.amps = base * at;
  const dIdE = k * p.ex * pw * at;
  out.dVgk = dIdE * sig;
  out.dVsk = dIdE * (sp / p.kp - (sig * vgk) / vsk);
  out.dVpk = base / p.kvb / (1 + r * r);
}

/** Koren pentode screen current (netlist-v1): Is = (Vgk + Vsk/mu)^ex / kg2 when the base is positive. */
export function korenPentodeScreen(p: KorenPentodeParams, vgk: number, vsk: number, scale: number, out: CurrentAndSlopes): void {
  out.dVpk = 0;
  const base = vgk + vsk / p.mu;
  if (!(base > 0)) {
    out.amps = 0;
    out.dVgk = 0;
    out.dVsk = 0;
    return;
  }
  const pw = powPositive(base, p.ex - 1);
  out.amps = (scale * pw * base) / p.kg2;
  const d = (scale * p.ex * pw) / p.kg2;
  out.dVgk = d;
  out.dVsk = d / p.mu;
}

/**
 * Grid current (Dempwolf & Zolzer, "A physically-motivated triode model for circuit
 * simulations", DAFx-11, 2011): Ig = gg·(softplus(cg·Vgk)/cg)^xi + ig0, grid to cathode.
 */
export function dempwolfZolzerGrid(p: GridCurrentParams, vgk: number, out: CurrentAndSlopes): void {
  out.dVpk = 0;
  out.dVsk = 0;
  const z = p.cg * vgk;
  softplusAndLogistic(z, spl);
  const x = spl[0]! / p.cg;
  if (!(x > 0)) {
    out.amps = p.ig0;
    out.dVgk = 0;
    return;
  }
  const pw = powPositive(x, p.xi - 1);
  out.amps = p.gg * pw * x + p.ig0;
  out.dVgk = p.gg * p.xi * pw * spl[1]!;
}

// Fused evaluations for the Newton root: the same equations as above, each written into a
// Float64Array (no object stores), sharing the transcendental work. tests/engine-perf-correctness
// checks them against the functions above. Measured (micro-benchmark, bundled, this machine):
// korenPentodeInto 125 ns, korenTriodeInto 94 ns, dempwolfZolzerGridInto 81 ns; a whole pentode
// device 233 ns (was ~260), triode 217 ns: the cost is the 4 exp/log per law (~15-21 ns each).

// Calling convention of the fused functions: inputs come in a Float64Array and every function
// has a single exit. Both keep V8 (Node 20, Chromium) from boxing doubles on the audio thread:
// passing doubles to a call that is not inlined, and early returns, each cost a 16-byte heap
// number per call in some inlining states (measured with process.memoryUsage on bundled code:
// a triode device went from 6-8 bytes per evaluation on average to 0).

/**
 * Koren triode plate current (see korenTriode). In: x[xo] = Vgk, x[xo+1] = Vpk, x[xo+2] = current
 * scale (sample factor). Out: out[o] = Ip, out[o+1] = dIp/dVgk, out[o+2] = dIp/dVpk.
 */
export function korenTriodeInto(p: KorenTriodeParams, x: Float64Array, xo: number, out: Float64Array, o: number): void {
  const vgk = x[xo]!,
    vpk = x[xo + 1]!,
    scale = x[xo + 2]!;
  let ip = 0,
    dg = 0,
    dp = 0;
  if (vpk > 0) {
    const s = Math.sqrt(p.kvb + vpk * vpk);
    const z = p.kp * (1 / p.mu + vgk / s);
    let sp: number, sig: number;
    if (z > 35) {
      sp = z;
      sig = 1;
    } else {
      const e = Math.exp(-Math.abs(z));
      const l = Math.log1p(e);
      if (z >= 0) {
        sp = z + l;
        sig = 1 / (1 + e);
      } else {
        sp = l;
        sig = e / (1 + e);
      }
    }
    const e1 = (vpk / p.kp) * sp;
    if (e1 > 0) {
      const k = (2 * scale) / p.kg1;
      const pw = Math.exp((p.ex - 1) * Math.log(e1));
      const dIdE = k * p.ex * pw;
      ip = k * pw * e1;
      dg = dIdE * ((vpk * sig) / s);
      dp = dIdE * (sp / p.kp - (sig * vgk * vpk * vpk) / (s * s * s));
    }
  }
  out[o] = ip;
  out[o + 1] = dg;
  out[o + 2] = dp;
}

/**
 * Koren pentode plate and screen currents (see korenPentodePlate, korenPentodeScreen). In:
 * x[xo..xo+3] = Vgk, Vpk, Vsk, current scale. Out: out[o..o+2] = Ip, dIp/dVgk, dIp/dVpk,
 * out[o+3] = dIp/dVsk, out[o+4..o+6] = Is, dIs/dVgk, dIs/dVsk.
 */
export function korenPentodeInto(p: KorenPentodeParams, x: Float64Array, xo: number, out: Float64Array, o: number): void {
  const vgk = x[xo]!,
    vpk = x[xo + 1]!,
    vsk = x[xo + 2]!,
    scale = x[xo + 3]!;
  const base = vgk + vsk / p.mu;
  let is = 0,
    dsg = 0,
    dss = 0;
  if (base > 0) {
    const pw = Math.exp((p.ex - 1) * Math.log(base));
    is = (scale * pw * base) / p.kg2;
    dsg = (scale * p.ex * pw) / p.kg2;
    dss = dsg / p.mu;
  }
  let ip = 0,
    dg = 0,
    dp = 0,
    ds = 0;
  if (vsk > 0 && vpk > 0) {
    const z = p.kp * (1 / p.mu + vgk / vsk);
    let sp: number, sig: number;
    if (z > 35) {
      sp = z;
      sig = 1;
    } else {
      const e = Math.exp(-Math.abs(z));
      const l = Math.log1p(e);
      if (z >= 0) {
        sp = z + l;
        sig = 1 / (1 + e);
      } else {
        sp = l;
        sig = e / (1 + e);
      }
    }
    const e1 = (vsk / p.kp) * sp;
    if (e1 > 0) {
      const k = (2 * scale) / p.kg1;
      const pw = Math.exp((p.ex - 1) * Math.log(e1));
      const b = k * pw * e1;
      const r = vpk / p.kvb;
      const at = Math.atan(r);
      const dIdE = k * p.ex * pw * at;
      ip = b * at;
      dg = dIdE * sig;
      dp = b / p.kvb / (1 + r * r);
      ds = dIdE * (sp / p.kp - (sig * vgk) / vsk);
    }
  }
  out[o] = ip;
  out[o + 1] = dg;
  out[o + 2] = dp;
  out[o + 3] = ds;
  out[o + 4] = is;
  out[o + 5] = dsg;
  out[o + 6] = dss;
}

/** Below this cg·Vgk the grid law is evaluated by its series form (dempwolfZolzerGridInto). */
const GRID_SERIES_BELOW = -10;

/** Dempwolf-Zolzer grid current (see dempwolfZolzerGrid). In: x[xo] = Vgk. Out: out[o] = Ig, out[o+1] = dIg/dVgk. */
export function dempwolfZolzerGridInto(p: GridCurrentParams, x: Float64Array, xo: number, out: Float64Array, o: number): void {
  const z = p.cg * x[xo]!;
  let ig = 0,
    dig = 0;
  if (z < GRID_SERIES_BELOW && p.cg > 0) {
    // Below cut-in (the usual case: a grid biased negative), with e = exp(z) < 4.6e-5 the
    // Taylor series ln(1+e) = e - e^2/2 + e^3/3 - e^4/4 and ln(ln(1+e)/e) = -e/2 + 5e^2/24 - e^3/8
    // are exact to < 1e-17 relative, so the same equation costs exp, log, exp instead of
    // exp, log1p, log, exp.
    const e = Math.exp(z);
    const sp = e * (1 + e * (-0.5 + e * (1 / 3 - e / 4)));
    const lsp = z + e * (-0.5 + e * (5 / 24 - e / 8));
    const pw = Math.exp((p.xi - 1) * (lsp - Math.log(p.cg)));
    ig = p.gg * pw * (sp / p.cg);
    dig = p.gg * p.xi * pw * (e / (1 + e));
  } else {
    let sp: number, sig: number;
    if (z > 35) {
      sp = z;
      sig = 1;
    } else {
      const e = Math.exp(-Math.abs(z));
      const l = Math.log1p(e);
      if (z >= 0) {
        sp = z + l;
        sig = 1 / (1 + e);
      } else {
        sp = l;
        sig = e / (1 + e);
      }
    }
    const x = sp / p.cg;
    if (x > 0) {
      const pw = Math.exp((p.xi - 1) * Math.log(x));
      ig = p.gg * pw * x;
      dig = p.gg * p.xi * pw * sig;
    }
  }
  out[o] = ig + p.ig0;
  out[o + 1] = dig;
}
