// Grid-current laws, by netlist-v1 model name. Each law supplies: its parameters' parsing and
// checks, its current with the analytic slope (object form for analyses, fused Float64Array form
// for the audio path), and its SPICE expression. Adding a law touches this module (plus the
// spec in docs/netlist-v1.md and the independent reference solver).
import { dempwolfZolzerGrid, dempwolfZolzerGridInto, type CurrentAndSlopes, type GridCurrentParams } from './models.ts';

/** Boltzmann constant over the elementary charge, volts per kelvin (SI 2019: k and q are exact). */
export const BOLTZMANN_VOLTS_PER_KELVIN = 1.380649e-23 / 1.602176634e-19;

/**
 * `initial-velocity` grid current (netlist-v1, docs/netlist-v1.md). Below the onset the grid
 * collects the electrons whose Maxwellian initial velocities carry them against the retarding
 * field: Ig grows as exp(Vgk / Vt), Vt = k·T/q of the cathode (Langmuir; Spangenberg, "Vacuum
 * Tubes", 1948, ch. on grid current). Above it a 3/2-power-like space-charge law takes over. The
 * two join at the onset with equal value and slope:
 *   u = Vgk - onsetVolts, Vt = k·cathodeKelvin/q
 *   u <= 0: Ig = gg·(xi·Vt)^xi·exp(u/Vt)
 *   u >  0: Ig = gg·(u + xi·Vt)^xi
 * onsetVolts carries the contact potential between grid and cathode (it moves from tube to tube).
 */
export interface InitialVelocityParams {
  /** Space-charge-region scale, A/V^xi. */
  readonly gg: number;
  /** Space-charge-region exponent (3/2 for Child-Langmuir). */
  readonly xi: number;
  /** Cathode temperature, kelvin (oxide cathodes about 1000-1100 K). */
  readonly cathodeKelvin: number;
  /** Grid-cathode voltage where the retarding (exponential) region ends, volts: the contact-potential offset. */
  readonly onsetVolts: number;
}

export type DempwolfZolzerLaw = GridCurrentParams & { readonly name: 'dempwolf-zolzer' };
export type InitialVelocityLaw = InitialVelocityParams & { readonly name: 'initial-velocity' };
/** A grid-current law as a netlist-v1 tube element carries it. */
export type GridLaw = DempwolfZolzerLaw | InitialVelocityLaw;
/** What devices accept: a named law, or bare Dempwolf-Zolzer parameters (older call sites). */
export type DeviceGridLaw = GridLaw | GridCurrentParams;

export const GRID_LAW_NAMES = ['dempwolf-zolzer', 'initial-velocity'] as const;
export type GridLawName = (typeof GRID_LAW_NAMES)[number];

export function isInitialVelocity(g: DeviceGridLaw): g is InitialVelocityLaw {
  return (g as { name?: string }).name === 'initial-velocity';
}

/** Precomputed constants of an initial-velocity law: [onset, 1/Vt, ln(gg·(xi·Vt)^xi), gg, xi, xi·Vt]. */
export function compileInitialVelocity(p: InitialVelocityParams): Float64Array {
  const vt = BOLTZMANN_VOLTS_PER_KELVIN * p.cathodeKelvin;
  const xv = p.xi * vt;
  return Float64Array.of(p.onsetVolts, 1 / vt, Math.log(p.gg) + p.xi * Math.log(xv), p.gg, p.xi, xv);
}

/**
 * Fused initial-velocity law (models.ts calling convention: inputs in an array, one exit, no
 * allocation). c = compileInitialVelocity(p). In: x[xo] = Vgk. Out: out[o] = Ig, out[o+1] = dIg/dVgk.
 * Cost: one exp below the onset (the usual case), one exp and one log above.
 */
export function initialVelocityGridInto(c: Float64Array, x: Float64Array, xo: number, out: Float64Array, o: number): void {
  const u = x[xo]! - c[0]!;
  let ig: number, dig: number;
  if (u <= 0) {
    ig = Math.exp(c[2]! + u * c[1]!);
    dig = ig * c[1]!;
  } else {
    const b = u + c[5]!;
    const pw = Math.exp((c[4]! - 1) * Math.log(b));
    ig = c[3]! * pw * b;
    dig = c[3]! * c[4]! * pw;
  }
  out[o] = ig;
  out[o + 1] = dig;
}

const scratchIn = new Float64Array(1);
const scratchOut = new Float64Array(2);

/** Grid current of any law at Vgk into `out` (amps, dVgk; other slopes 0). For analyses, not the audio path. */
export function gridCurrentAt(g: DeviceGridLaw, vgk: number, out: CurrentAndSlopes): void {
  if (!isInitialVelocity(g)) {
    dempwolfZolzerGrid(g, vgk, out);
    return;
  }
  scratchIn[0] = vgk;
  initialVelocityGridInto(compileInitialVelocity(g), scratchIn, 0, scratchOut, 0);
  out.amps = scratchOut[0]!;
  out.dVgk = scratchOut[1]!;
  out.dVpk = 0;
  out.dVsk = 0;
}

/**
 * A grid law compiled for the audio path: `into` evaluates it (fused form) without allocating.
 * Devices hold one; the law's constants are computed once here, never per sample.
 */
export class CompiledGridLaw {
  readonly law: DeviceGridLaw;
  private readonly iv: Float64Array | null;
  constructor(law: DeviceGridLaw) {
    this.law = law;
    this.iv = isInitialVelocity(law) ? compileInitialVelocity(law) : null;
  }
  into(x: Float64Array, xo: number, out: Float64Array, o: number): void {
    if (this.iv !== null) initialVelocityGridInto(this.iv, x, xo, out, o);
    else dempwolfZolzerGridInto(this.law as GridCurrentParams, x, xo, out, o);
  }
}

const fmt = (x: number) => String(x);
const softplusSpice = (z: string) => `(max(${z},0)+ln(1+exp(-abs(${z}))))`;

/** SPICE behavioural expression of the grid current, grid to cathode, for the voltage expression `vgk`. */
export function gridSpiceExpression(g: GridLaw, vgk: string): string {
  if (g.name === 'dempwolf-zolzer') return `${fmt(g.gg)}*pwr(${softplusSpice(`${fmt(g.cg)}*${vgk}`)}/${fmt(g.cg)},${fmt(g.xi)})+${fmt(g.ig0)}`;
  const vt = BOLTZMANN_VOLTS_PER_KELVIN * g.cathodeKelvin,
    xv = g.xi * vt;
  const u = `(${vgk}-(${fmt(g.onsetVolts)}))`;
  const a = g.gg * Math.pow(xv, g.xi);
  return `(${u}>0)?(${fmt(g.gg)}*pwr(${u}+${fmt(xv)},${fmt(g.xi)})):(${fmt(a)}*exp(${u}/${fmt(vt)}))`;
}

/** Sane parameter ranges of the initial-velocity law (checks shared by the netlist reader and the fitter). */
export const INITIAL_VELOCITY_BOUNDS = {
  gg: [1e-7, 1e-1],
  xi: [1, 2.5],
  cathodeKelvin: [700, 1500],
  onsetVolts: [-3, 1],
} as const;

type Json = Record<string, unknown>;

/** Parse and check a gridCurrent object; `fail` turns a problem into the caller's error. */
export function parseGridLaw(g: Json, where: string, fail: (message: string) => never): GridLaw {
  const num = (key: string): number => {
    const v = g[key];
    if (typeof v !== 'number' || !Number.isFinite(v)) fail(`${where}: "${key}" must be a finite number`);
    return v as number;
  };
  if (g.name === 'dempwolf-zolzer') {
    const gg = num('gg'),
      cg = num('cg'),
      xi = num('xi'),
      ig0 = num('ig0');
    if (!(gg >= 0)) fail(`${where}: "gg" must be zero or positive (got ${gg})`);
    if (!(cg > 0)) fail(`${where}: "cg" must be positive (got ${cg})`);
    if (!(xi > 0)) fail(`${where}: "xi" must be positive (got ${xi})`);
    return { name: 'dempwolf-zolzer', gg, cg, xi, ig0 };
  }
  if (g.name === 'initial-velocity') {
    const p = { gg: num('gg'), xi: num('xi'), cathodeKelvin: num('cathodeKelvin'), onsetVolts: num('onsetVolts') };
    for (const k of Object.keys(INITIAL_VELOCITY_BOUNDS) as (keyof typeof INITIAL_VELOCITY_BOUNDS)[]) {
      const [lo, hi] = INITIAL_VELOCITY_BOUNDS[k];
      if (!(p[k] >= lo && p[k] <= hi)) fail(`${where}: "${k}" = ${p[k]} is outside ${lo}..${hi}`);
    }
    return { name: 'initial-velocity', ...p };
  }
  return fail(`${where}: gridCurrent.name must be one of ${GRID_LAW_NAMES.map((n) => `"${n}"`).join(', ')}`);
}
