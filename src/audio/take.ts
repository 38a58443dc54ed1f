// Main-thread side of the take recorder (worklets/take.worklet.ts): hands the processor its pool
// of chunks, collects the full ones (copying each out and handing it back), and assembles the take.
import { TAKE_CHUNK_SAMPLES, TAKE_POOL_CHUNKS, type TakeFromProcessor, type TakeToProcessor } from '../dsp/realtime/take-messages.ts';

export interface Take {
  readonly samples: Float32Array;
  readonly sampleRateHz: number;
  /** Samples lost because the main thread fell behind (0 normally). */
  readonly droppedSamples: number;
  /** The take reached maxSeconds and stopped there. */
  readonly truncated: boolean;
}

/** Longest take, seconds (10 minutes of mono float at 48 kHz is 115 MB). */
export const MAX_TAKE_SECONDS = 600;

export class TakeRecorder {
  private chunks: Float32Array[] = [];
  private samplesSoFar = 0;
  private recording = false;
  private truncated = false;
  private pending: { resolve: (t: Take) => void } | null = null;
  private readonly maxSamples: number;

  constructor(
    private readonly port: MessagePort,
    private readonly sampleRateHz: number,
    maxSeconds = MAX_TAKE_SECONDS,
  ) {
    this.maxSamples = Math.round(maxSeconds * sampleRateHz);
    port.onmessage = (e: MessageEvent<TakeFromProcessor>) => this.receive(e.data);
    const buffers = Array.from({ length: TAKE_POOL_CHUNKS }, () => new Float32Array(TAKE_CHUNK_SAMPLES));
    this.send(
      { type: 'buffers', buffers },
      buffers.map((b) => b.buffer),
    );
  }

  get isRecording(): boolean {
    return this.recording;
  }
  /** Seconds recorded so far in this take (0 when not recording). */
  get seconds(): number {
    return this.recording ? this.samplesSoFar / this.sampleRateHz : 0;
  }

  start(): void {
    if (this.recording) return;
    this.chunks = [];
    this.samplesSoFar = 0;
    this.truncated = false;
    this.recording = true;
    this.send({ type: 'start' });
  }

  /** Stop and get the take (after the processor's last chunk). */
  stop(): Promise<Take> {
    if (!this.recording && !this.pending)
      return Promise.resolve({ samples: new Float32Array(0), sampleRateHz: this.sampleRateHz, droppedSamples: 0, truncated: false });
    return new Promise((resolve) => {
      this.pending = { resolve };
      this.send({ type: 'stop' });
    });
  }

  private send(m: TakeToProcessor, transfer: Transferable[] = []): void {
    this.port.postMessage(m, transfer);
  }

  private receive(m: TakeFromProcessor): void {
    if (m.type === 'chunk') {
      const room = this.maxSamples - this.samplesSoFar;
      if (room > 0) {
        const n = Math.min(m.length, room);
        this.chunks.push(m.samples.slice(0, n));
        this.samplesSoFar += n;
        if (n < m.length || this.samplesSoFar >= this.maxSamples) this.truncated = true;
      }
      this.send({ type: 'buffers', buffers: [m.samples] }, [m.samples.buffer]);
      if (this.truncated && this.recording && !this.pending) void this.stop().then((t) => this.onTruncated?.(t));
    } else if (m.type === 'stopped') {
      this.recording = false;
      const samples = new Float32Array(this.samplesSoFar);
      let o = 0;
      for (const c of this.chunks) {
        samples.set(c, o);
        o += c.length;
      }
      this.chunks = [];
      const take: Take = { samples, sampleRateHz: this.sampleRateHz, droppedSamples: m.droppedSamples, truncated: this.truncated };
      const p = this.pending;
      this.pending = null;
      p?.resolve(take);
    }
  }

  /** Called with the take when it stopped by itself at the length limit. */
  onTruncated: ((t: Take) => void) | null = null;
}

/**
 * The take recorder's place in the graph: its processor listens to the live input (a realtime
 * context only; it is loaded on the native context, and only ever connects to native nodes:
 * the stream source and its splitter). Takes that end by themselves (length limit, live input
 * stopped) go to the one `onEnded` listener.
 */
export class TakeDeck {
  private ended: ((t: Take) => void) | null = null;

  private constructor(
    readonly node: AudioWorkletNode | null,
    private readonly recorder: TakeRecorder | null,
    private readonly sampleRateHz: number,
  ) {
    if (recorder) recorder.onTruncated = (t) => this.ended?.(t);
  }

  static async attach(raw: BaseAudioContext, moduleUrl: string, processorName: string): Promise<TakeDeck> {
    if (!(raw instanceof AudioContext)) return new TakeDeck(null, null, raw.sampleRate);
    await raw.audioWorklet.addModule(moduleUrl);
    const node = new AudioWorkletNode(raw, processorName, { numberOfInputs: 1, numberOfOutputs: 0, channelCount: 1, channelCountMode: 'explicit' });
    return new TakeDeck(node, new TakeRecorder(node.port, raw.sampleRate), raw.sampleRate);
  }

  /** Start recording; `liveOn` says whether there is any input to record. */
  start(liveOn: boolean): void {
    if (!this.recorder) throw new Error('takes are recorded from live input on a realtime context');
    if (!liveOn) throw new Error('start live input before recording a take');
    this.recorder.start();
  }

  stop(): Promise<Take> {
    return this.recorder
      ? this.recorder.stop()
      : Promise.resolve({ samples: new Float32Array(0), sampleRateHz: this.sampleRateHz, droppedSamples: 0, truncated: false });
  }

  /** The live input stopped: a take in progress ends with it, handed over rather than lost. */
  inputStopped(): void {
    if (this.recorder?.isRecording) void this.recorder.stop().then((t) => this.ended?.(t));
  }

  get seconds(): number | null {
    return this.recorder?.isRecording ? this.recorder.seconds : null;
  }
  onEnded(listener: (t: Take) => void): void {
    this.ended = listener;
  }
}
