// The one worst-case sheet in the workspace: the same checkCircuit that `check` and `parts` run
// (dsp/analysis/check.ts), and the same parts rows, so the part editor's figures are the
// command line's. The model's design (the power-supply estimate as B+) comes from it as well.
import type { Design } from '../../dsp/circuit/design.ts';
import { checkCircuit, type WorstCase } from '../../dsp/analysis/check.ts';
import { designSupply } from '../../dsp/analysis/design-supply.ts';
import { partsRows, type PartsRow } from '../../dsp/analysis/parts-list.ts';

export interface WorstCaseView {
  readonly result: WorstCase;
  /** One row per part, as `valvewright parts` prints it. */
  readonly rows: readonly PartsRow[];
}

const sheets = new WeakMap<Design, WorstCaseView>();
const models = new WeakMap<Design, Design>();

/** The worst-case sheet of a design (cached per design object). */
export function worstCase(d: Design): WorstCaseView {
  let v = sheets.get(d);
  if (!v) {
    const result = checkCircuit(d);
    v = { result, rows: partsRows(result.model, result.ratings, result.findings) };
    sheets.set(d, v);
    models.set(d, result.model);
  }
  return v;
}

/**
 * The design the model runs: with a power-supply section, its estimate is the B+ (volts,
 * source resistance, filter), as on the command line. Cached per design object.
 */
export function modelDesign(d: Design): Design {
  if (!d.powerSupply) return d;
  let m = models.get(d);
  if (!m) {
    try { m = designSupply(d).design; } catch { m = d; }
    models.set(d, m);
  }
  return m;
}
