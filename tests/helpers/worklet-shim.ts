// Node stand-ins for the AudioWorkletGlobalScope (AudioWorkletProcessor, registerProcessor,
// sampleRate, currentFrame) so worklets/circuit.worklet.ts runs unchanged in tests.
import type { FromProcessor, ProcessorInit, ToProcessor } from '../../src/dsp/realtime/messages.ts';
import { PROCESSOR_NAME } from '../../src/dsp/realtime/messages.ts';

interface FakePort {
  onmessage: ((e: { data: unknown }) => void) | null;
  postMessage(m: unknown): void;
}
interface ProcessorLike {
  readonly port: FakePort;
  process(inputs: Float32Array[][], outputs: Float32Array[][]): boolean;
}
type ProcessorCtor = new (options?: { processorOptions?: unknown }) => ProcessorLike;

const registry = new Map<string, ProcessorCtor>();
let sink: FromProcessor[] = [];
const g = globalThis as Record<string, unknown>;

export async function installShim(sampleRateHz: number): Promise<void> {
  g.sampleRate = sampleRateHz;
  g.currentFrame = 0;
  if (!g.AudioWorkletProcessor) {
    g.AudioWorkletProcessor = class {
      readonly port: FakePort;
      constructor() {
        const out = sink;
        this.port = { onmessage: null, postMessage: (m: unknown) => out.push(structuredClone(m) as FromProcessor) };
      }
    };
    g.registerProcessor = (name: string, ctor: ProcessorCtor) => {
      if (registry.has(name)) throw new Error(`processor ${name} registered twice`);
      registry.set(name, ctor);
    };
    // A computed specifier keeps the worklet (AudioWorkletGlobalScope types) out of the main
    // type-check; worklets/tsconfig.json checks it.
    const url = new URL('../../worklets/circuit.worklet.ts', import.meta.url).href;
    await import(/* @vite-ignore */ url);
  }
}

export interface ShimmedProcessor {
  readonly posted: FromProcessor[];
  send(m: ToProcessor | unknown): void;
  /** Run the input through in blocks (128 by default); returns the output channel. */
  run(input: Float32Array, block?: number): Float32Array;
}

export function makeProcessor(init: ProcessorInit = {}, sampleRateHz = 48000): ShimmedProcessor {
  g.sampleRate = sampleRateHz;
  const ctor = registry.get(PROCESSOR_NAME);
  if (!ctor) throw new Error('installShim first');
  const posted: FromProcessor[] = [];
  sink = posted;
  const proc = new ctor({ processorOptions: init });
  return {
    posted,
    send(m) {
      proc.port.onmessage?.({ data: structuredClone(m) });
    },
    run(input, block = 128) {
      const out = new Float32Array(input.length);
      const o = new Float32Array(block);
      for (let f = 0; f < input.length; f += block) {
        const n = Math.min(block, input.length - f);
        const inp = input.subarray(f, f + n);
        const outBuf = n === block ? o : new Float32Array(n);
        proc.process([[inp]], [[outBuf]]);
        out.set(outBuf.subarray(0, n), f);
        g.currentFrame = (g.currentFrame as number) + n;
      }
      return out;
    },
  };
}
