// Works out the worst-case sheet (checkCircuit: warm idle, cold start, a maximum-input render)
// off the main thread: it takes most of a second on the two-stage templates.
import { validateDesign } from '../dsp/circuit/design.ts';
import { worstCase } from './model/worst-case.ts';
import type { SheetReply, SheetRequest } from './model/worst-case.ts';

self.onmessage = (e: MessageEvent<SheetRequest>) => {
  const { id, design } = e.data;
  let reply: SheetReply;
  // validation registers the design's fitted tubes in this worker too
  try {
    validateDesign(design, { wiring: false });
    reply = { id, ok: true, view: worstCase(design) };
  } catch (err) {
    reply = { id, ok: false, reason: err instanceof Error ? err.message : String(err) };
  }
  (self as unknown as { postMessage(m: unknown): void }).postMessage(reply);
};
