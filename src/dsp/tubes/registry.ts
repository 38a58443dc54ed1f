// One place per tube model (netlist-v1 names). Each plate model supplies its parameter checks,
// its device for the WDF root, its currents with the analytic slopes (small-signal parameters
// and the analyses' current evaluations) and its SPICE expressions; grid laws live in
// grid-laws.ts with the same parts. The linearisation, the ratings sheet and the SPICE export
// call these functions, never a law directly, so a new law or a fitted tube touches one module.
import { TriodeDevice, PentodeDevice, type TubeFunctions } from './devices.ts';
import { gridCurrentAt, gridSpiceExpression, parseGridLaw, type GridLaw } from './grid-laws.ts';
import {
  korenPentodePlate,
  korenPentodeScreen,
  korenTriode,
  newSlopes,
  type CurrentAndSlopes,
  type KorenPentodeParams,
  type KorenTriodeParams,
} from './models.ts';

export type PlateModelName = 'koren-triode' | 'koren-pentode';
export type SectionKind = 'triode' | 'pentode';

/** A tube as a netlist-v1 element carries it (the parts the models need). */
export type TubeModelElement =
  | { readonly kind: 'triode'; readonly model: KorenTriodeParams & { readonly name: 'koren-triode' }; readonly gridCurrent?: GridLaw }
  | { readonly kind: 'pentode'; readonly model: KorenPentodeParams & { readonly name: 'koren-pentode' }; readonly gridCurrent?: GridLaw };

/** The plate model that goes with each section kind. */
export const PLATE_MODEL_OF: Readonly<Record<SectionKind, PlateModelName>> = { triode: 'koren-triode', pentode: 'koren-pentode' };

/** Parameter names of each plate model, in netlist-v1 order. */
export const PLATE_PARAMS: Readonly<Record<PlateModelName, readonly string[]>> = {
  'koren-triode': ['mu', 'ex', 'kg1', 'kp', 'kvb'],
  'koren-pentode': ['mu', 'ex', 'kg1', 'kg2', 'kp', 'kvb'],
};

type Json = Record<string, unknown>;

/** Parse and check a tube element's "model" object for a section kind. */
export function parsePlateModel(kind: 'triode', m: Json, where: string, fail: (msg: string) => never): KorenTriodeParams & { readonly name: 'koren-triode' };
export function parsePlateModel(kind: 'pentode', m: Json, where: string, fail: (msg: string) => never): KorenPentodeParams & { readonly name: 'koren-pentode' };
export function parsePlateModel(
  kind: SectionKind,
  m: Json,
  where: string,
  fail: (msg: string) => never,
): (KorenTriodeParams & { readonly name: 'koren-triode' }) | (KorenPentodeParams & { readonly name: 'koren-pentode' }) {
  const name = PLATE_MODEL_OF[kind];
  if (m.name !== name) fail(`${where}: model.name must be "${name}"`);
  const num = (key: string, allowZero = false): number => {
    const v = m[key];
    if (typeof v !== 'number' || !Number.isFinite(v)) fail(`${where}.model: "${key}" must be a finite number`);
    const x = v as number;
    if (!(x > 0) && !(allowZero && x === 0)) fail(`${where}.model: "${key}" must be ${allowZero ? 'zero or positive' : 'positive'} (got ${x})`);
    return x;
  };
  const base = { mu: num('mu'), ex: num('ex'), kg1: num('kg1'), kp: num('kp'), kvb: num('kvb', true) };
  return kind === 'triode' ? { name: 'koren-triode', ...base } : { name: 'koren-pentode', ...base, kg2: num('kg2') };
}

/** Parse a tube element's optional "gridCurrent" (absent or null: no grid current). */
export function parseGridCurrent(g: unknown, where: string, fail: (msg: string) => never): GridLaw | undefined {
  if (g === undefined || g === null) return undefined;
  if (typeof g !== 'object' || Array.isArray(g)) return fail(`${where}: gridCurrent must be an object`);
  return parseGridLaw(g as Json, `${where}.gridCurrent`, fail);
}

/** The root device of a tube element (sample factor 1: the element's kg1, kg2 carry it). */
export function tubeDevice(t: TubeModelElement, functions: TubeFunctions = 'exact'): TriodeDevice | PentodeDevice {
  return t.kind === 'triode' ? new TriodeDevice(t.model, t.gridCurrent, 1, functions) : new PentodeDevice(t.model, t.gridCurrent, 1, functions);
}

/** Currents and slopes of every electrode. */
export interface TubeCurrents {
  readonly plate: CurrentAndSlopes;
  readonly screen: CurrentAndSlopes;
  readonly grid: CurrentAndSlopes;
}

export function newTubeCurrents(): TubeCurrents {
  return { plate: newSlopes(), screen: newSlopes(), grid: newSlopes() };
}

/** Plate, screen and grid currents with their partial derivatives at cathode-relative voltages (analyses; allocates nothing). */
export function tubeCurrents(t: TubeModelElement, vgk: number, vpk: number, vsk: number, out: TubeCurrents): void {
  if (t.kind === 'triode') {
    korenTriode(t.model, vgk, vpk, 1, out.plate);
    out.screen.amps = 0;
    out.screen.dVgk = 0;
    out.screen.dVpk = 0;
    out.screen.dVsk = 0;
  } else {
    korenPentodePlate(t.model, vgk, vpk, vsk, 1, out.plate);
    korenPentodeScreen(t.model, vgk, vsk, 1, out.screen);
  }
  if (t.gridCurrent) gridCurrentAt(t.gridCurrent, vgk, out.grid);
  else {
    out.grid.amps = 0;
    out.grid.dVgk = 0;
    out.grid.dVpk = 0;
    out.grid.dVsk = 0;
  }
}

const sp = (z: string) => `(max(${z},0)+ln(1+exp(-abs(${z}))))`;
const n = (x: number) => String(x);

/** SPICE behavioural expressions (current from electrode to cathode) for voltage expressions vgk, vpk, vsk. */
export function tubeSpiceExpressions(t: TubeModelElement, vgk: string, vpk: string, vsk: string): { plate: string; screen?: string; grid?: string } {
  const m = t.model;
  let plate: string, screen: string | undefined;
  if (t.kind === 'triode') {
    const e1 = `(${vpk}/${n(m.kp)})*${sp(`${n(m.kp)}*(1/${n(m.mu)}+${vgk}/sqrt(${n(m.kvb)}+${vpk}*${vpk}))`)}`;
    plate = `(${vpk}>0)?((${e1}>0)?(2*pwr(${e1},${n(m.ex)})/${n(m.kg1)}):0):0`;
  } else {
    const e1 = `(${vsk}/${n(m.kp)})*${sp(`${n(m.kp)}*(1/${n(m.mu)}+${vgk}/${vsk})`)}`;
    plate = `(${vsk}>0)?((${vpk}>0)?((${e1}>0)?(2*pwr(${e1},${n(m.ex)})/${n(m.kg1)}*atan(${vpk}/${n(m.kvb)})):0):0):0`;
    const base = `(${vgk}+${vsk}/${n(m.mu)})`;
    screen = `(${base}>0)?(pwr(${base},${n(m.ex)})/${n(t.model.kg2)}):0`;
  }
  return { plate, ...(screen ? { screen } : {}), ...(t.gridCurrent ? { grid: gridSpiceExpression(t.gridCurrent, vgk) } : {}) };
}
