import { TAKE_PROCESSOR_NAME, type TakeFromProcessor, type TakeToProcessor } from '../src/dsp/realtime/take-messages.ts';

// Thin AudioWorkletProcessor that records its input (mixed to mono) into chunks from a pool the
// main thread provides (src/dsp/realtime/take-messages.ts); no output. Imports stay first and
// nothing is exported (see ../shared/notes/toolchain.md).

class TakeProcessor extends AudioWorkletProcessor {
  private readonly pool: Float32Array[] = [];
  private chunk: Float32Array | null = null;
  private fill = 0;
  private recording = false;
  private dropped = 0;
  // reused for every post (the structured clone copies it; the buffer itself is transferred)
  private readonly chunkMsg: { type: 'chunk'; samples: Float32Array; length: number } = { type: 'chunk', samples: new Float32Array(0), length: 0 };
  private readonly transfer: ArrayBuffer[] = [new ArrayBuffer(0)];

  constructor() {
    super();
    this.port.onmessage = (e: MessageEvent<TakeToProcessor>) => {
      const m = e.data;
      if (m.type === 'buffers') {
        for (let k = 0; k < m.buffers.length; k++) this.pool.push(m.buffers[k]!);
      } else if (m.type === 'start') {
        this.recording = true;
        this.dropped = 0;
      } else if (m.type === 'stop') {
        this.recording = false;
        this.flush();
        const done: TakeFromProcessor = { type: 'stopped', droppedSamples: this.dropped };
        this.port.postMessage(done);
      }
    };
  }

  private flush(): void {
    const c = this.chunk;
    if (!c || this.fill === 0) return;
    this.chunk = null;
    this.chunkMsg.samples = c;
    this.chunkMsg.length = this.fill;
    this.transfer[0] = c.buffer as ArrayBuffer;
    this.port.postMessage(this.chunkMsg, this.transfer);
    this.fill = 0;
  }

  process(inputs: Float32Array[][]): boolean {
    if (!this.recording) return true;
    const chans = inputs[0];
    if (!chans || chans.length === 0) return true;
    const first = chans[0]!,
      n = first.length,
      nc = chans.length,
      g = 1 / nc;
    for (let k = 0; k < n; k++) {
      if (!this.chunk) {
        this.chunk = this.pool.pop() ?? null;
        this.fill = 0;
        if (!this.chunk) {
          this.dropped += n - k;
          return true;
        }
      }
      let v = first[k]!;
      for (let c = 1; c < nc; c++) v += chans[c]![k]!;
      this.chunk[this.fill++] = nc === 1 ? v : v * g;
      if (this.fill === this.chunk.length) this.flush();
    }
    return true;
  }
}

registerProcessor(TAKE_PROCESSOR_NAME, TakeProcessor);
