// Messages between the workspace and its client-pack worker (pack.worker.ts).
import type { Design } from '../dsp/circuit/design.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';

export interface PackRequest {
  readonly type: 'pack';
  readonly id: number;
  readonly designA: Design;
  readonly designB: Design;
  /** The DI region to render, mono, full scale = inputVoltsAtFullScale volts. */
  readonly input: Float32Array;
  readonly sampleRateHz: number;
  readonly inputVoltsAtFullScale: number;
  readonly factor: OversamplingFactor;
  /** Clip name (names the dry file) and what part of it was taken, for the sheet. */
  readonly clipName: string;
  readonly regionLabel: string;
}

export interface PackProgress {
  readonly type: 'progress';
  readonly id: number;
  readonly fraction: number;
  readonly stage: string;
}
export interface PackDone {
  readonly type: 'done';
  readonly id: number;
  readonly zip: Uint8Array;
  readonly fileName: string;
}
export interface PackFailed {
  readonly type: 'failed';
  readonly id: number;
  readonly reason: string;
}
export type PackReply = PackProgress | PackDone | PackFailed;
