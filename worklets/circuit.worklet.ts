import { DualSlotEngine } from '../src/dsp/realtime/dual-slot-engine.ts';
import { PROCESSOR_NAME, type FromProcessor, type ProcessorInit } from '../src/dsp/realtime/messages.ts';

// Thin AudioWorkletProcessor around DualSlotEngine (src/dsp/realtime/dual-slot-engine.ts).
// Imports stay first and nothing is exported (see ../shared/notes/toolchain.md).
// Input: channels of input 0 mixed to mono; output: the same mono signal on every channel.

const MAX_QUANTUM = 4096;
// performance.now() where the scope has it; Date.now() otherwise (its 1 ms steps average out
// over the ~12 blocks between meter reports, since block starts fall at random within a step).
const perf = (globalThis as { performance?: { now(): number } }).performance;
const clock: () => number = perf && typeof perf.now === 'function' ? () => perf.now() : () => Date.now();

class CircuitProcessor extends AudioWorkletProcessor {
  private readonly engine: DualSlotEngine;
  private readonly mono = new Float32Array(MAX_QUANTUM);

  constructor(options?: { processorOptions?: unknown }) {
    super();
    const init = (options?.processorOptions ?? {}) as ProcessorInit;
    const post = (m: FromProcessor): void => this.port.postMessage(m);
    this.engine = new DualSlotEngine({
      sampleRateHz: sampleRate,
      ...(init.factor !== undefined ? { factor: init.factor } : {}),
      ...(init.meterHz !== undefined ? { meterHz: init.meterHz } : {}),
      ...(init.initial !== undefined ? { initial: init.initial } : {}),
      ...(init.safetyMute !== undefined ? { safetyMute: init.safetyMute } : {}),
      nowMs: clock,
      post,
    });
    this.port.onmessage = (e: MessageEvent) => this.engine.handle(e.data);
    post({ type: 'ready', sampleRateHz: sampleRate, factor: this.engine.factor });
  }

  process(inputs: Float32Array[][], outputs: Float32Array[][]): boolean {
    const out = outputs[0];
    const first = out?.[0];
    if (!out || !first) return true;
    const n = Math.min(first.length, MAX_QUANTUM);
    const chans = inputs[0] ?? [];
    let src: Float32Array | null = null;
    if (chans.length === 1) src = chans[0] ?? null;
    else if (chans.length > 1) {
      const mono = this.mono,
        g = 1 / chans.length;
      mono.fill(0, 0, n);
      for (const c of chans) for (let k = 0; k < n; k++) mono[k]! += c[k]! * g;
      src = mono;
    }
    this.engine.process(src, first, n);
    for (let c = 1; c < out.length; c++) out[c]!.set(first.subarray(0, n));
    return true;
  }
}

registerProcessor(PROCESSOR_NAME, CircuitProcessor);
