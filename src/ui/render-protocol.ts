// Messages between the workspace and its render worker (the fallback audio path).
import type { Design } from '../dsp/circuit/design.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';

export interface RenderRequest {
  readonly type: 'render';
  readonly id: number;
  readonly design: Design;
  /** Input samples at full scale = inputVoltsAtFullScale volts. */
  readonly input: Float32Array;
  readonly sampleRateHz: number;
  readonly inputVoltsAtFullScale: number;
  readonly factor: OversamplingFactor;
  /** Node voltages to record for the scope. */
  readonly probes: readonly string[];
  readonly probeRateHz: number;
}

export interface RenderDone {
  readonly type: 'done';
  readonly id: number;
  /** Output deviation from its operating point divided by outputVoltsAtFullScale. */
  readonly output: Float32Array;
  readonly outputVoltsAtFullScale: number;
  readonly probes: readonly Float32Array[];
  readonly probeRateHz: number;
  /** Wall time of the render divided by the clip's duration. */
  readonly loadFraction: number;
}

export interface RenderFailed { readonly type: 'failed'; readonly id: number; readonly reason: string }
export type RenderReply = RenderDone | RenderFailed;
