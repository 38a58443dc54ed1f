// File player: a clip (decoded file or samples) played into the circuit, optionally looping a region.
import * as Tone from 'tone';
import { bufferFrom, decodeAudio } from './buffers.ts';

export interface SourceInfo {
  readonly durationSeconds: number;
  readonly sampleRateHz: number;
  readonly channels: number;
}
export interface LoopRegion {
  readonly startSeconds: number;
  readonly endSeconds: number;
}

export class FilePlayer {
  private readonly player: Tone.Player;
  private source: AudioBuffer | null = null;
  private loop: LoopRegion | null = null;
  private startedAt = 0;

  /** Plays into `input`; `onStop` hears every stop (the idle policy's countdown). */
  constructor(
    private readonly ctx: Tone.Context,
    input: Tone.InputNode,
    onStop: () => void,
  ) {
    this.player = new Tone.Player({ context: ctx, loop: false });
    this.player.connect(input);
    this.player.onstop = onStop;
  }

  get playing(): boolean {
    return this.player.state === 'started';
  }

  async loadFile(bytes: ArrayBuffer | Blob): Promise<SourceInfo> {
    const ab = bytes instanceof ArrayBuffer ? bytes : await bytes.arrayBuffer();
    return this.use(await decodeAudio(this.ctx.rawContext as BaseAudioContext, ab));
  }

  setSource(samples: Float32Array, rateHz: number): SourceInfo {
    return this.use(bufferFrom(samples, rateHz));
  }

  private use(b: AudioBuffer): SourceInfo {
    if (this.playing) this.player.stop();
    this.source = b;
    this.player.buffer = new Tone.ToneAudioBuffer(b);
    this.applyLoop();
    return { durationSeconds: b.duration, sampleRateHz: b.sampleRate, channels: b.numberOfChannels };
  }

  private applyLoop(): void {
    if (!this.source) return;
    if (this.loop) {
      this.player.loop = true;
      this.player.setLoopPoints(this.loop.startSeconds, this.loop.endSeconds);
    } else this.player.loop = false;
  }

  /** Start from the top (or the loop's start); the context must be running. */
  play(): void {
    if (!this.source) throw new Error('no audio file loaded: load one before playing');
    if (this.playing) this.player.stop();
    const offset = this.loop ? this.loop.startSeconds : 0;
    this.player.start(undefined, offset);
    this.startedAt = this.ctx.currentTime - offset;
  }

  get hasSource(): boolean {
    return this.source !== null;
  }

  stop(): void {
    if (this.playing) this.player.stop();
  }

  positionSeconds(): number {
    const src = this.source,
      loop = this.loop;
    if (!this.playing || !src) return 0;
    const t = this.ctx.currentTime - this.startedAt;
    if (!loop) return Math.min(t, src.duration);
    const len = loop.endSeconds - loop.startSeconds;
    return t < loop.endSeconds ? t : loop.startSeconds + ((t - loop.startSeconds) % len);
  }

  setLoop(region: LoopRegion | null): void {
    if (region) {
      const dur = this.source?.duration ?? Infinity;
      if (!(region.startSeconds >= 0 && region.endSeconds > region.startSeconds && region.endSeconds <= dur + 1e-9)) {
        throw new Error(`loop region ${region.startSeconds}..${region.endSeconds} s must lie inside the file (0..${dur} s) with start before end`);
      }
    }
    this.loop = region;
    this.applyLoop();
  }

  dispose(): void {
    this.player.dispose();
  }
}
