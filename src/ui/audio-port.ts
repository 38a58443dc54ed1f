// What the workspace needs from an audio back end. The workspace talks only to this
// interface; audio-engine-port.ts implements it over the real-time engine in src/audio.
import type { Design } from '../dsp/circuit/design.ts';
import type { Monitor, Slot } from '../dsp/realtime/messages.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';
import type { LiveInputDevice, LiveInputOptions, LiveLatency } from '../audio/index.ts';

export interface SourceClip {
  readonly name: string;
  /** Mono samples, full scale = 1. */
  readonly samples: Float32Array;
  readonly sampleRateHz: number;
  /** Calibration that came with the clip (demo clips), volts at full scale. */
  readonly voltsAtFullScale?: number;
}

export interface LoopRegion {
  readonly startSeconds: number;
  readonly endSeconds: number;
}

export interface AudioStatus {
  readonly engine: string;
  readonly playing: boolean;
  readonly rendering: boolean;
  readonly durationSeconds: number;
  /** Processor time over real time of the last render, or null before one. */
  readonly loadFraction: number | null;
  /**
   * Loudness of B against A (dB), measured from the sound both slots make over a 3 s window
   * (null while either is silent): what a meter on the output reads when A and B are switched
   * with the match off. With the match on, B's gain takes it out.
   */
  readonly offsetDb: number | null;
  /** The match gain on B now, dB (0 with the match off). */
  readonly matchGainDb: number;
  /** Loudness of what is heard (the output, after the limiter) over the same 3 s window, LUFS; null while silent. */
  readonly outputLufs: number | null;
  readonly live: 'off' | 'muted' | 'on';
  readonly message: string | null;
  /** The live quality the engine runs at (the overload guard may lower it). */
  readonly qualityFactor: OversamplingFactor;
  /** Why the port lowered the quality itself (overload), until the next choice; else null. */
  readonly qualityNote: string | null;
  /** Channels of the live input while it runs (2 for a two-input interface), else 0. */
  readonly liveChannels: number;
  /** The audio thread is suspended for want of anything to do (resumes on play, live input or an edit). */
  readonly idle: boolean;
  /** Why the processor muted live input for safety (until the user unmutes), else null. */
  readonly safetyNote: string | null;
}

export interface ScopeTrace {
  readonly names: readonly string[];
  readonly traces: readonly Float32Array[];
  readonly rateHz: number;
  /** A rolling window of the latest reports (true) or a whole clip (false). */
  readonly rolling: boolean;
}

export interface AudioPort {
  readonly engineName: string;
  setDesign(slot: Slot, design: Design): void;
  setMonitor(target: Monitor): void;
  setLoudnessMatch(on: boolean): void;
  setInputCalibration(voltsAtFullScale: number): void;
  setQuality(factor: OversamplingFactor): void;
  /** Let the port lower the live quality by itself when the processor stays near its limit (default on). */
  setOverloadGuard(on: boolean): void;
  setSource(clip: SourceClip): void;
  setLoop(region: LoopRegion | null): void;
  /** Cabinet impulse response (mono) or null for none. */
  setCabinet(ir: Float32Array | null, sampleRateHz: number): void;
  decode(bytes: ArrayBuffer, name: string): Promise<SourceClip>;
  play(): Promise<void>;
  stop(): void;
  positionSeconds(): number;
  /** Start live input (always muted first); a running input is restarted with the new choice. */
  startLive(options?: LiveInputOptions): Promise<void>;
  /** The audio inputs on offer (labels once access was granted). */
  listInputs(): Promise<LiveInputDevice[]>;
  /** The live path's delay by part while live input runs, else null. */
  liveLatency(): LiveLatency | null;
  /** Start recording the live input as a take (live input must be on). */
  startTake(): void;
  /** Stop recording; the take as a clip (null if nothing was recorded). */
  stopTake(): Promise<SourceClip | null>;
  /** Seconds in the running take, or null. */
  takeSeconds(): number | null;
  /** Called with a take that ended by itself (live input stopped, or the length limit). */
  onTakeEnded(listener: (clip: SourceClip | null) => void): void;
  stopLive(): void;
  setMuted(muted: boolean): void;
  /** Peak levels since the last call: circuit input volts and output dBFS. */
  levels(): { inputVolts: number; outputDbfs: number };
  /** Output spectrum in dB per bin (length = fftSize / 2) and the bin width; false if none. */
  spectrum(into: Float32Array): { ok: boolean; binHertz: number };
  scope(slot: Slot): ScopeTrace | null;
  /** The present source rendered offline through one slot (for checks and tests). */
  renderOffline(slot: Slot | 'dry', seconds: number): Promise<Float32Array | null>;
  subscribe(listener: (s: AudioStatus) => void): () => void;
}
