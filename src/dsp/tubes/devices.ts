// Tubes as nonlinear multiports at the WDF root. Port order (all relative to the cathode):
// triode [grid-cathode, plate-cathode], pentode [grid-cathode, plate-cathode, screen-cathode].
// Grid conduction is part of every tube's root, so grid-leak bias and blocking come out of the
// same solve as the plate current.
// 'exact' evaluates the netlist-v1 equations (models.ts); 'table' uses tables.ts (an option,
// accuracy measured in tests/engine-perf-correctness.test.ts).
import type { RootDevice } from '../wdf/newton-root.ts';
import { korenPentodeInto, korenTriodeInto, type GridCurrentParams, type KorenPentodeParams, type KorenTriodeParams } from './models.ts';
import { CompiledGridLaw, type DeviceGridLaw } from './grid-laws.ts';
import { gridLawTable, pentodeTables, triodeTables, type HermiteTable, type PentodeTables, type TriodeTables } from './tables.ts';

const NO_GRID: GridCurrentParams = { gg: 0, cg: 1, xi: 1, ig0: 0 };

export type TubeFunctions = 'exact' | 'table';

/**
 * What both tube devices share: plate-law parameters, the grid law (compiled once), the sample
 * factor and the optional grid table ('table': whatever the law, tabulated through the generic
 * one-dimensional path of tables.ts; accuracy in tests/live-tables.test.ts).
 */
abstract class TubeDeviceBase<P extends KorenTriodeParams> {
  readonly params: P;
  readonly grid: DeviceGridLaw | undefined;
  /** Tube sample factor: scales plate current (strong > 1 > weak). */
  sample: number;
  readonly functions: TubeFunctions;
  protected readonly gridLaw: CompiledGridLaw | null;
  protected readonly gridTab: HermiteTable | null;

  constructor(params: P, grid: DeviceGridLaw | undefined, sample: number, functions: TubeFunctions) {
    this.params = params;
    this.grid = grid;
    this.sample = sample;
    this.functions = functions;
    this.gridLaw = grid ? new CompiledGridLaw(grid) : null;
    // 'table': any grid law through the generic one-dimensional path (tables.ts gridLawTable)
    const law = this.gridLaw;
    this.gridTab = functions === 'table' && grid && law ? gridLawTable(JSON.stringify(grid), (x, xo, out, o) => law.into(x, xo, out, o)) : null;
  }

  /** Grid current and slope at x[0] = Vgk into w[o], w[o+1]. */
  protected gridInto(x: Float64Array, w: Float64Array, o: number): void {
    const g = this.gridLaw;
    if (g === null) {
      w[o] = 0;
      w[o + 1] = 0;
    } else if (!this.gridTab || !this.gridTab.lookupFrom(x, 0, w, o)) g.into(x, 0, w, o);
  }
}

export class TriodeDevice extends TubeDeviceBase<KorenTriodeParams> implements RootDevice {
  readonly portCount = 2;
  readonly maxStepVolts = [10, 50];
  readonly kneePorts = [1];
  readonly jacobianPattern: readonly (readonly [number, number])[] = [
    [0, 0],
    [1, 0],
    [1, 1],
  ];
  private readonly w = new Float64Array(8);
  /** Inputs of the fused laws (models.ts calling convention): Vgk, Vpk, sample factor. */
  private readonly x = new Float64Array(3);
  private readonly tables: TriodeTables | null;

  constructor(params: KorenTriodeParams, grid: DeviceGridLaw | undefined, sample = 1, functions: TubeFunctions = 'exact') {
    super(params, grid, sample, functions);
    this.tables = functions === 'table' ? triodeTables(params) : null;
  }

  evaluate(v: Float64Array, o: number, i: Float64Array, d: Float64Array, dOff: number): void {
    const w = this.w,
      x = this.x;
    x[0] = v[o]!;
    x[1] = v[o + 1]!;
    x[2] = this.sample;
    if (!this.tables || !this.tableTriode()) korenTriodeInto(this.params, x, 0, w, 0);
    this.gridInto(x, w, 3);
    i[o] = w[3]!;
    i[o + 1] = w[0]!;
    d[dOff] = w[4]!;
    d[dOff + 1] = w[1]!;
    d[dOff + 2] = w[2]!;
  }

  /** Table path into w[0..2]; false when outside the tables (caller uses the exact equations). */
  private tableTriode(): boolean {
    const t = this.tables!,
      w = this.w,
      p = this.params,
      x = this.x;
    const vgk = x[0]!,
      vpk = x[1]!;
    if (!(vpk > 0)) {
      w[0] = 0;
      w[1] = 0;
      w[2] = 0;
      return true;
    }
    const s = Math.sqrt(p.kvb + vpk * vpk);
    w[7] = p.kp * (1 / p.mu + vgk / s); // z, read by the table from the array (no boxing)
    if (!t.w.lookupFrom(x, 1, w, 5) || !t.g.lookupFrom(w, 7, w, 3)) return false;
    const W = this.sample * w[5]!,
      dW = this.sample * w[6]!,
      G = w[3]!,
      dG = w[4]!;
    w[0] = W * G;
    w[1] = W * dG * (p.kp / s);
    w[2] = dW * G - W * dG * ((p.kp * vgk * vpk) / (s * s * s));
    return true;
  }
}

export class PentodeDevice extends TubeDeviceBase<KorenPentodeParams> implements RootDevice {
  readonly portCount = 3;
  readonly maxStepVolts = [10, 50, 50];
  readonly kneePorts = [1, 2];
  readonly jacobianPattern: readonly (readonly [number, number])[] = [
    [0, 0],
    [1, 0],
    [1, 1],
    [1, 2],
    [2, 0],
    [2, 2],
  ];
  private readonly w = new Float64Array(16);
  /** Inputs of the fused laws (models.ts calling convention): Vgk, Vpk, Vsk, sample factor. */
  private readonly x = new Float64Array(4);
  private readonly tables: PentodeTables | null;

  constructor(params: KorenPentodeParams, grid: DeviceGridLaw | undefined, sample = 1, functions: TubeFunctions = 'exact') {
    super(params, grid, sample, functions);
    this.tables = functions === 'table' ? pentodeTables(params) : null;
  }

  evaluate(v: Float64Array, o: number, i: Float64Array, d: Float64Array, dOff: number): void {
    const w = this.w,
      x = this.x;
    x[0] = v[o]!;
    x[1] = v[o + 1]!;
    x[2] = v[o + 2]!;
    x[3] = this.sample;
    if (!this.tables || !this.tablePentode()) korenPentodeInto(this.params, x, 0, w, 0);
    this.gridInto(x, w, 7);
    i[o] = w[7]!;
    i[o + 1] = w[0]!;
    i[o + 2] = w[4]!;
    d[dOff] = w[8]!;
    d[dOff + 1] = w[1]!;
    d[dOff + 2] = w[2]!;
    d[dOff + 3] = w[3]!;
    d[dOff + 4] = w[5]!;
    d[dOff + 5] = w[6]!;
  }

  /** Table path into w[0..6] (korenPentodeInto layout); false when outside the tables. */
  private tablePentode(): boolean {
    const t = this.tables!,
      w = this.w,
      p = this.params,
      sc = this.sample,
      x = this.x;
    const vgk = x[0]!,
      vpk = x[1]!,
      vsk = x[2]!;
    const base = vgk + vsk / p.mu;
    if (base > 0) {
      w[15] = base;
      if (!t.s.lookupFrom(w, 15, w, 9)) return false;
      w[4] = sc * w[9]!;
      w[5] = sc * w[10]!;
      w[6] = (sc * w[10]!) / p.mu;
    } else {
      w[4] = 0;
      w[5] = 0;
      w[6] = 0;
    }
    if (!(vsk > 0) || !(vpk > 0)) {
      w[0] = 0;
      w[1] = 0;
      w[2] = 0;
      w[3] = 0;
      return true;
    }
    w[15] = p.kp * (1 / p.mu + vgk / vsk); // z
    if (!t.w.lookupFrom(x, 2, w, 9) || !t.g.lookupFrom(w, 15, w, 11) || !t.a.lookupFrom(x, 1, w, 13)) return false;
    const W = sc * w[9]!,
      dW = sc * w[10]!,
      G = w[11]!,
      dG = w[12]!,
      A = w[13]!,
      dA = w[14]!;
    const WG = W * G;
    w[0] = WG * A;
    w[1] = W * dG * (p.kp / vsk) * A;
    w[2] = WG * dA;
    w[3] = (dW * G - W * dG * ((p.kp * vgk) / (vsk * vsk))) * A;
    return true;
  }
}

export { NO_GRID };
