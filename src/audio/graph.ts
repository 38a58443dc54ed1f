// The audio graph, built alike on a live and an offline context:
//   sources -> input (Tone.Gain) -> circuit processor (two slots, dry, limiter)
//           -> [cabinet convolver | bypass] -> safety processor (limiter at -1 dBFS) -> output -> destination
//                                                                                  \-> analyser
// The safety processor is the same worklet with no designs, monitoring dry with live mode
// on (limiter forced): a cabinet response at its real level could otherwise lift the output
// above the ceiling after the circuit's own limiter.
import * as Tone from 'tone';
import workletUrl from '../../worklets/circuit.worklet.ts?worker&url';
import { PROCESSOR_NAME, type ProcessorInit, type ToProcessor } from '../dsp/realtime/messages.ts';

export type ToneContext = Tone.Context | Tone.OfflineContext;

export interface Graph {
  readonly ctx: ToneContext;
  readonly input: Tone.Gain;
  readonly circuit: AudioWorkletNode;
  readonly safety: AudioWorkletNode;
  readonly output: Tone.Gain;
  readonly analyser: Tone.Analyser;
  /** Cabinet impulse response (null: bypassed). */
  setCabinet(ir: AudioBuffer | null): void;
  readonly hasCabinet: boolean;
  /** Post to the circuit processor (`transfer`: buffers handed over instead of copied). */
  send(msg: ToProcessor, transfer?: Transferable[]): void;
  dispose(): void;
}

const loaded = new WeakSet<object>();

/** Load the worklet module into a context (once per context). */
export async function loadWorklet(ctx: ToneContext): Promise<void> {
  if (loaded.has(ctx)) return;
  await ctx.addAudioWorkletModule(workletUrl);
  loaded.add(ctx);
}

export const SAFETY_INIT: ProcessorInit = {
  meterHz: 0,
  factor: 1,
  safetyMute: false,
  initial: [
    { type: 'monitor', target: 'dry' },
    { type: 'set-live-input', live: true },
  ],
};

export async function buildGraph(ctx: ToneContext, init: ProcessorInit, fftSize = 4096): Promise<Graph> {
  await loadWorklet(ctx);
  const circuit = ctx.createAudioWorkletNode(PROCESSOR_NAME, {
    numberOfInputs: 1,
    numberOfOutputs: 1,
    outputChannelCount: [1],
    processorOptions: init,
  });
  const safety = ctx.createAudioWorkletNode(PROCESSOR_NAME, {
    numberOfInputs: 1,
    numberOfOutputs: 1,
    outputChannelCount: [1],
    processorOptions: SAFETY_INIT,
  });
  const input = new Tone.Gain({ context: ctx, gain: 1 });
  const bypass = new Tone.Gain({ context: ctx, gain: 1 });
  const output = new Tone.Gain({ context: ctx, gain: 1 });
  const analyser = new Tone.Analyser({ context: ctx, type: 'fft', size: fftSize, smoothing: 0 });
  input.connect(circuit);
  Tone.connect(circuit, bypass);
  bypass.connect(safety);
  Tone.connect(safety, output);
  output.connect(analyser);
  output.connect(ctx.destination);
  let cabinet: Tone.Convolver | null = null;
  return {
    ctx,
    input,
    circuit,
    safety,
    output,
    analyser,
    get hasCabinet() {
      return cabinet !== null;
    },
    setCabinet(ir: AudioBuffer | null): void {
      // A fresh convolver per response: Tone.Convolver replaces its native node on a second
      // buffer and the new node comes back with normalize on; normalize must be off before
      // the buffer is set (Web Audio: normalization is applied when the buffer is assigned).
      if (cabinet) {
        cabinet.dispose();
        cabinet = null;
      }
      if (ir) {
        cabinet = new Tone.Convolver({ context: ctx, normalize: false });
        cabinet.buffer = new Tone.ToneAudioBuffer(ir);
        Tone.connect(circuit, cabinet);
        cabinet.connect(safety);
        bypass.gain.value = 0;
      } else bypass.gain.value = 1;
    },
    send(msg: ToProcessor, transfer: Transferable[] = []): void {
      circuit.port.postMessage(msg, transfer);
    },
    dispose(): void {
      cabinet?.dispose();
      input.dispose();
      bypass.dispose();
      output.dispose();
      analyser.dispose();
      circuit.disconnect();
      safety.disconnect();
      circuit.port.close();
      safety.port.close();
    },
  };
}
