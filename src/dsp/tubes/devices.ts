// Tubes as nonlinear multiports at the WDF root. Port order (all relative to the cathode):
// triode [grid-cathode, plate-cathode], pentode [grid-cathode, plate-cathode, screen-cathode].
// Grid conduction is part of every tube's root, so grid-leak bias and blocking come out of the
// same solve as the plate current.
import type { RootDevice } from '../wdf/newton-root.ts';
import {
  dempwolfZolzerGrid, korenPentodePlate, korenPentodeScreen, korenTriode, newSlopes,
  type GridCurrentParams, type KorenPentodeParams, type KorenTriodeParams,
} from './models.ts';

const NO_GRID: GridCurrentParams = { gg: 0, cg: 1, xi: 1, ig0: 0 };

export class TriodeDevice implements RootDevice {
  readonly portCount = 2;
  readonly maxStepVolts = [2, 50];
  readonly jacobianPattern: readonly (readonly [number, number])[] = [[0, 0], [1, 0], [1, 1]];
  params: KorenTriodeParams;
  grid: GridCurrentParams | undefined;
  /** Tube sample factor: scales plate current (strong > 1 > weak). */
  sample: number;
  private readonly ip = newSlopes();
  private readonly ig = newSlopes();

  constructor(params: KorenTriodeParams, grid: GridCurrentParams | undefined, sample = 1) {
    this.params = params;
    this.grid = grid;
    this.sample = sample;
  }

  evaluate(v: Float64Array, o: number, i: Float64Array, jac: Float64Array, m: number): void {
    const vgk = v[o]!, vpk = v[o + 1]!;
    korenTriode(this.params, vgk, vpk, this.sample, this.ip);
    if (this.grid) dempwolfZolzerGrid(this.grid, vgk, this.ig);
    else { this.ig.amps = 0; this.ig.dVgk = 0; }
    i[o] = this.ig.amps;
    i[o + 1] = this.ip.amps;
    jac[o * m + o] = this.ig.dVgk;
    jac[o * m + o + 1] = 0;
    jac[(o + 1) * m + o] = this.ip.dVgk;
    jac[(o + 1) * m + o + 1] = this.ip.dVpk;
  }
}

export class PentodeDevice implements RootDevice {
  readonly portCount = 3;
  readonly maxStepVolts = [2, 50, 50];
  readonly jacobianPattern: readonly (readonly [number, number])[] = [[0, 0], [1, 0], [1, 1], [1, 2], [2, 0], [2, 2]];
  params: KorenPentodeParams;
  grid: GridCurrentParams | undefined;
  sample: number;
  private readonly ip = newSlopes();
  private readonly is = newSlopes();
  private readonly ig = newSlopes();

  constructor(params: KorenPentodeParams, grid: GridCurrentParams | undefined, sample = 1) {
    this.params = params;
    this.grid = grid;
    this.sample = sample;
  }

  evaluate(v: Float64Array, o: number, i: Float64Array, jac: Float64Array, m: number): void {
    const vgk = v[o]!, vpk = v[o + 1]!, vsk = v[o + 2]!;
    korenPentodePlate(this.params, vgk, vpk, vsk, this.sample, this.ip);
    korenPentodeScreen(this.params, vgk, vsk, this.sample, this.is);
    dempwolfZolzerGrid(this.grid ?? NO_GRID, vgk, this.ig);
    if (!this.grid) { this.ig.amps = 0; this.ig.dVgk = 0; }
    i[o] = this.ig.amps;
    i[o + 1] = this.ip.amps;
    i[o + 2] = this.is.amps;
    const r0 = o * m, r1 = (o + 1) * m, r2 = (o + 2) * m;
    jac[r0 + o] = this.ig.dVgk; jac[r0 + o + 1] = 0; jac[r0 + o + 2] = 0;
    jac[r1 + o] = this.ip.dVgk; jac[r1 + o + 1] = this.ip.dVpk; jac[r1 + o + 2] = this.ip.dVsk;
    jac[r2 + o] = this.is.dVgk; jac[r2 + o + 1] = 0; jac[r2 + o + 2] = this.is.dVsk;
  }
}

export { NO_GRID };
