// Builds slot plans for the processor off the audio thread: in a web worker where the page can
// start one (src/audio/plan.worker.ts), else on the main thread in the next idle moment. Replies
// are matched to requests by id.
import { buildSlotPlan, type SlotPlan } from '../dsp/circuit/plan.ts';
import type { Design } from '../dsp/circuit/design.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';
import PlanWorker from './plan.worker.ts?worker';

export interface PlanRequest {
  readonly id: number;
  readonly design: Design;
  readonly baseRateHz: number;
  readonly factor: OversamplingFactor;
}
export type PlanReply = { readonly id: number; readonly plan: SlotPlan } | { readonly id: number; readonly error: string };

export class Planner {
  private worker: Worker | null = null;
  private nextId = 1;
  private readonly waiting = new Map<number, { resolve: (p: SlotPlan) => void; reject: (e: Error) => void }>();

  constructor(useWorker = typeof Worker !== 'undefined') {
    if (!useWorker) return;
    try {
      this.worker = new PlanWorker();
      this.worker.onmessage = (e: MessageEvent<PlanReply>) => {
        const w = this.waiting.get(e.data.id);
        if (!w) return;
        this.waiting.delete(e.data.id);
        if ('plan' in e.data) w.resolve(e.data.plan);
        else w.reject(new Error(e.data.error));
      };
      this.worker.onerror = () => this.fallBack('the plan worker failed');
    } catch {
      this.worker = null;
    }
  }

  /** Compile `design` for the processor's rate and factor. Rejects with the compile error (one line). */
  plan(design: Design, baseRateHz: number, factor: OversamplingFactor): Promise<SlotPlan> {
    if (!this.worker) {
      return new Promise((resolve, reject) =>
        setTimeout(() => {
          try {
            resolve(buildSlotPlan(design, baseRateHz, factor));
          } catch (e) {
            reject(e instanceof Error ? e : new Error(String(e)));
          }
        }, 0),
      );
    }
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      this.waiting.set(id, { resolve, reject });
      this.worker!.postMessage({ id, design, baseRateHz, factor } satisfies PlanRequest);
    });
  }

  /** The worker died: the rest is built on the main thread. */
  private fallBack(why: string): void {
    this.worker?.terminate();
    this.worker = null;
    for (const [, w] of this.waiting) w.reject(new Error(why));
    this.waiting.clear();
  }

  dispose(): void {
    this.fallBack('planner disposed');
  }
}
