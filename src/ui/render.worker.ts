// Renders a clip through a design off the main thread (the fallback audio path).
import { designCircuit } from '../dsp/circuit/design.ts';
import { OversampledCircuit } from '../dsp/render/oversampled.ts';
import { estimateOutputVoltsAtFullScale } from '../dsp/render/levelling.ts';
import type { RenderReply, RenderRequest } from './render-protocol.ts';

function render(req: RenderRequest): RenderReply {
  const t0 = performance.now();
  const circuit = designCircuit(req.design);
  const sim = new OversampledCircuit(circuit, req.sampleRateHz, req.factor, 'live');
  const e = sim.engine;
  const probes = req.probes.filter((n) => n === '0' || e.nodeNames.includes(n));
  e.setProbes(probes);
  const dc = e.operatingPoint().nodes[e.outputNodeName] ?? 0;
  const scale = estimateOutputVoltsAtFullScale(circuit, req.sampleRateHz, req.inputVoltsAtFullScale);
  const n = req.input.length;
  const out = new Float32Array(n);
  const every = Math.max(1, Math.round(req.sampleRateHz / req.probeRateHz));
  const traces = probes.map(() => new Float32Array(Math.ceil(n / every)));
  for (let k = 0; k < n; k++) {
    const y = sim.processSample(req.input[k]! * req.inputVoltsAtFullScale);
    const s = (y - dc) / scale;
    out[k] = Number.isFinite(s) ? s : 0;
    if (k % every === 0) for (let j = 0; j < traces.length; j++) traces[j]![k / every] = e.probeValues[j] ?? 0;
  }
  const seconds = (performance.now() - t0) / 1000;
  return { type: 'done', id: req.id, output: out, outputVoltsAtFullScale: scale, probes: traces, probeRateHz: req.sampleRateHz / every, loadFraction: seconds / (n / req.sampleRateHz) };
}

self.onmessage = (ev: MessageEvent<RenderRequest>) => {
  const req = ev.data;
  let reply: RenderReply;
  try {
    reply = render(req);
  } catch (err) {
    reply = { type: 'failed', id: req.id, reason: (err as Error).message };
  }
  const transfer = reply.type === 'done' ? [reply.output.buffer, ...reply.probes.map((p) => p.buffer)] : [];
  (self as unknown as { postMessage(m: unknown, t: Transferable[]): void }).postMessage(reply, transfer as Transferable[]);
};
