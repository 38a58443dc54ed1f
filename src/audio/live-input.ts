// Live input: a capture device (one channel of an interface, or both averaged) into the circuit
// through a gain that starts muted; the take deck listens to the same signal.
import * as Tone from 'tone';
import type { TakeDeck } from './take.ts';

export const LIVE_INPUT_WARNING =
  'Use headphones: with speakers the guitar pickup and the microphone feed back, and a fuzz can howl loudly. Live input starts muted.';

export class LiveInputError extends Error {
  override name = 'LiveInputError';
}

/** Which input to play through the circuit live. */
export interface LiveInputOptions {
  /** A device from listInputs() (default: the browser's default input). */
  readonly deviceId?: string;
  /** Channel 1 or 2 of the device on its own, or 'mix' (both averaged, the default). */
  readonly channel?: LiveChannel;
}
export type LiveChannel = 1 | 2 | 'mix';
export interface LiveInputDevice {
  readonly deviceId: string;
  readonly label: string;
}

export class LiveInput {
  private readonly gain: Tone.Gain;
  private stream: MediaStream | null = null;
  private streamNode: MediaStreamAudioSourceNode | null = null;
  private splitter: ChannelSplitterNode | null = null;
  private channelCount = 0;
  private muted = true;
  /** The device's signal before the mute gain: the input meter reads it while live input is muted. */
  private readonly tap: AnalyserNode;
  private readonly tapBuf: Float32Array<ArrayBuffer>;

  /**
   * @param started called once the device runs (still muted), before it is connected
   * @param stopped called after the device stopped
   */
  constructor(
    private readonly ctx: Tone.Context,
    private readonly raw: AudioContext,
    input: Tone.InputNode,
    private readonly take: TakeDeck,
    private readonly started: () => Promise<void>,
    private readonly stopped: () => void,
  ) {
    this.gain = new Tone.Gain({ context: ctx, gain: 0 });
    this.gain.connect(input);
    this.tap = raw.createAnalyser();
    this.tap.fftSize = 2048;
    this.tapBuf = new Float32Array(this.tap.fftSize);
  }

  /** Peak (full scale 1) of the last 2048 input samples while the input runs muted; 0 otherwise. */
  peakWhileMuted(): number {
    if (!this.stream || !this.muted) return 0;
    this.tap.getFloatTimeDomainData(this.tapBuf);
    let peak = 0;
    for (let k = 0; k < this.tapBuf.length; k++) {
      const a = Math.abs(this.tapBuf[k]!);
      if (a > peak) peak = a;
    }
    return peak;
  }

  get state(): 'off' | 'muted' | 'on' {
    return !this.stream ? 'off' : this.muted ? 'muted' : 'on';
  }
  get on(): boolean {
    return this.stream !== null;
  }
  /** Channels of the running device (0 when off). */
  get channels(): number {
    return this.channelCount;
  }

  /** The device's own input latency as the browser reports it (0 where it does not). */
  get deviceLatencySeconds(): number {
    const settings = this.stream?.getAudioTracks()[0]?.getSettings() as (MediaTrackSettings & { latency?: number }) | undefined;
    return typeof settings?.latency === 'number' && settings.latency >= 0 ? settings.latency : 0;
  }

  async start(options: LiveInputOptions = {}): Promise<void> {
    if (this.stream) return;
    if (!navigator.mediaDevices?.getUserMedia) throw new LiveInputError('live input needs a secure page (https or localhost) with microphone support');
    const { deviceId, channel = 'mix' } = options;
    if (channel !== 'mix' && channel !== 1 && channel !== 2) throw new LiveInputError(`input channel must be 1, 2 or mix (got ${String(channel)})`);
    // two channels where the device has them (an interface's inputs 1 and 2), unprocessed
    const audio: MediaTrackConstraints = {
      echoCancellation: false,
      noiseSuppression: false,
      autoGainControl: false,
      channelCount: { ideal: 2 },
      ...(deviceId ? { deviceId: { exact: deviceId } } : {}),
    };
    let stream: MediaStream;
    try {
      stream = await navigator.mediaDevices.getUserMedia({ audio });
    } catch (e) {
      const name = e instanceof DOMException ? e.name : '';
      if (name === 'NotAllowedError' || name === 'SecurityError')
        throw new LiveInputError('microphone access was denied: allow it in the browser to use live input');
      if (name === 'NotFoundError' || name === 'OverconstrainedError') throw new LiveInputError('no audio input device found (or the chosen one is gone)');
      if (name === 'NotReadableError') throw new LiveInputError('the audio input device is busy or failed to start');
      throw new LiveInputError(`live input failed: ${e instanceof Error ? e.message : String(e)}`);
    }
    const channels = stream.getAudioTracks()[0]?.getSettings().channelCount ?? 1;
    if (channel === 2 && channels < 2) {
      for (const t of stream.getTracks()) t.stop();
      throw new LiveInputError('this input has one channel: choose channel 1 (or mixed)');
    }
    this.stream = stream;
    await this.started();
    const node = this.raw.createMediaStreamSource(stream);
    this.streamNode = node;
    this.channelCount = channels;
    const tap = this.take.node;
    if (channel === 'mix') {
      Tone.connect(node, this.gain);
      node.connect(this.tap);
      if (tap) node.connect(tap);
    } else {
      // one channel of the interface on its own (a guitar on input 2 would otherwise come in
      // at half level, averaged with a silent input 1)
      const splitter = this.raw.createChannelSplitter(2);
      this.splitter = splitter;
      node.connect(splitter);
      Tone.connect(splitter, this.gain, channel - 1, 0);
      splitter.connect(this.tap, channel - 1, 0);
      if (tap) splitter.connect(tap, channel - 1, 0);
    }
    this.muted = true;
    this.gain.gain.value = 0;
  }

  /** Acts at once (the gain ramps in 2 ms). */
  setMuted(muted: boolean): void {
    this.muted = muted;
    this.gain.gain.cancelScheduledValues(this.ctx.currentTime);
    this.gain.gain.rampTo(muted || !this.stream ? 0 : 1, 0.002);
  }

  stop(): void {
    if (!this.stream) return;
    this.take.inputStopped();
    this.gain.gain.value = 0;
    this.streamNode?.disconnect();
    this.splitter?.disconnect();
    for (const t of this.stream.getTracks()) t.stop();
    this.stream = null;
    this.streamNode = null;
    this.splitter = null;
    this.channelCount = 0;
    this.muted = true;
    this.stopped();
  }

  /** The audio inputs the browser offers (labels only after access was granted once). */
  static async list(): Promise<LiveInputDevice[]> {
    if (!navigator.mediaDevices?.enumerateDevices) return [];
    const all = await navigator.mediaDevices.enumerateDevices();
    return all.filter((d) => d.kind === 'audioinput').map((d, k) => ({ deviceId: d.deviceId, label: d.label || `audio input ${k + 1}` }));
  }

  dispose(): void {
    this.stop();
    this.gain.dispose();
  }
}
