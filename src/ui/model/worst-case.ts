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
    try {
      m = designSupply(d).design;
    } catch {
      m = d;
    }
    models.set(d, m);
  }
  return m;
}

/** A request to the sheet worker (sheet.worker.ts) and its reply (plain data: structured-cloned). */
export interface SheetRequest {
  readonly id: number;
  readonly design: Design;
}
export type SheetReply =
  { readonly id: number; readonly ok: true; readonly view: WorstCaseView } | { readonly id: number; readonly ok: false; readonly reason: string };

/**
 * The sheet of the latest design asked for, from a worker (or on the main thread in the next
 * idle moment where workers are unavailable). Answers to older requests are dropped.
 */
export class SheetService {
  private worker: Worker | null = null;
  private next = 0;
  private latest = -1;
  private pending = new Map<number, Design>();

  constructor(private readonly onSheet: (design: Design, view: WorstCaseView | null) => void) {
    try {
      this.worker = new Worker(new URL('../sheet.worker.ts', import.meta.url), { type: 'module' });
      this.worker.onmessage = (e: MessageEvent<SheetReply>) => this.answer(e.data);
      this.worker.onerror = () => {
        this.worker = null;
      };
    } catch {
      this.worker = null;
    }
  }

  request(design: Design): void {
    const id = this.next++;
    this.latest = id;
    this.pending.set(id, design);
    if (this.worker) {
      this.worker.postMessage({ id, design } satisfies SheetRequest);
      return;
    }
    setTimeout(() => {
      if (id !== this.latest) return;
      let reply: SheetReply;
      try {
        reply = { id, ok: true, view: worstCase(design) };
      } catch (err) {
        reply = { id, ok: false, reason: (err as Error).message };
      }
      this.answer(reply);
    }, 0);
  }

  private answer(r: SheetReply): void {
    const design = this.pending.get(r.id);
    this.pending.delete(r.id);
    if (design === undefined || r.id !== this.latest) return;
    this.onSheet(design, r.ok ? r.view : null);
  }

  dispose(): void {
    this.worker?.terminate();
    this.worker = null;
  }
}
