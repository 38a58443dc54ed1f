// Cabinet: an impulse response convolved at its real level (the graph's convolver, normalize
// off), resampled to the context's rate; null bypasses.
import { decodeAudio, monoBuffer, resampleBuffer } from './buffers.ts';
import type { Graph } from './graph.ts';

export type CabinetSource = string | ArrayBuffer | { readonly samples: Float32Array; readonly sampleRateHz: number } | null;

export class Cabinet {
  private response: AudioBuffer | null = null;

  constructor(
    private readonly graph: Graph,
    private readonly ctx: BaseAudioContext,
  ) {}

  /** The response in use (offline renders convolve with it too). */
  get buffer(): AudioBuffer | null {
    return this.response;
  }

  async load(src: CabinetSource): Promise<void> {
    const rate = this.ctx.sampleRate;
    let b: AudioBuffer | null = null;
    if (typeof src === 'string') {
      const r = await fetch(src);
      if (!r.ok) throw new Error(`could not fetch cabinet response ${src} (HTTP ${r.status})`);
      b = await decodeAudio(this.ctx, await r.arrayBuffer());
    } else if (src instanceof ArrayBuffer) b = await decodeAudio(this.ctx, src);
    else if (src) b = await monoBuffer(src.samples, src.sampleRateHz, rate);
    if (b) b = await resampleBuffer(b, rate);
    this.response = b;
    this.graph.setCabinet(b);
  }
}
