// Web worker: compiles designs into slot plans (src/dsp/circuit/plan.ts) off both the main and
// the audio thread. One request in, one reply out, matched by id (src/audio/planner.ts).
import { buildSlotPlan, planTransferables } from '../dsp/circuit/plan.ts';
import { validateDesign } from '../dsp/circuit/design.ts';
import type { PlanReply, PlanRequest } from './planner.ts';

interface WorkerScope {
  onmessage: ((e: MessageEvent<PlanRequest>) => void) | null;
  postMessage(m: PlanReply, transfer: Transferable[]): void;
}
const scope = self as unknown as WorkerScope;

scope.onmessage = (e) => {
  const r = e.data;
  try {
    const plan = buildSlotPlan(validateDesign(r.design), r.baseRateHz, r.factor);
    scope.postMessage({ id: r.id, plan }, planTransferables(plan));
  } catch (err) {
    scope.postMessage({ id: r.id, error: err instanceof Error ? err.message : String(err) }, []);
  }
};
