// Typed messages between the main thread and the audio-thread processor: one discriminated
// union each way, shared by worklets/ and src/audio/.
import type { Design, Part } from '../circuit/design.ts';
import type { OversamplingFactor } from '../oversampling/oversampler.ts';

export type Slot = 'A' | 'B';
export type Monitor = Slot | 'dry';

export type ToProcessor =
  /** Replace a slot's design (compiled on the audio thread at a block boundary; the slot restarts at its operating point). */
  | { readonly type: 'load-design'; readonly slot: Slot; readonly design: Design }
  /** New value of one part (resistor, capacitor, pot position/value): the circuit keeps its state. */
  | { readonly type: 'set-part'; readonly slot: Slot; readonly part: Part }
  | { readonly type: 'set-tube-sample'; readonly slot: Slot; readonly tubeId: string; readonly sample: number }
  | { readonly type: 'set-quality'; readonly factor: OversamplingFactor }
  /** What is heard: slot A, slot B or the dry input; crossfaded over a few milliseconds. */
  | { readonly type: 'monitor'; readonly target: Monitor }
  /** Input samples at full scale stand for this many volts at the circuit input (peak). */
  | { readonly type: 'set-input-calibration'; readonly voltsAtFullScale: number }
  /** Output volts that map to full scale, per slot (loudness matching sets these). */
  | { readonly type: 'set-output-scale'; readonly slot: Slot; readonly voltsAtFullScale: number }
  /** Master output level in dB (applied before the safety limiter). */
  | { readonly type: 'set-output-level'; readonly db: number }
  /** Live input forces the safety limiter on; files may bypass it. */
  | { readonly type: 'set-live-input'; readonly live: boolean }
  | { readonly type: 'set-mute'; readonly muted: boolean }
  | { readonly type: 'reset' };

export interface MeterReport {
  readonly type: 'meter';
  /** Peak of the circuit input since the last report, volts. */
  readonly inputPeakVolts: number;
  /** Peak of the output since the last report, dBFS. */
  readonly outputPeakDbfs: number;
  /** First stage control-grid voltage of the monitored slot (or A when dry), volts, at report time. */
  readonly gridVolts: number;
  /** Plate voltages of the monitored slot's tubes, in design order, volts. */
  readonly plateVolts: readonly number[];
  /** Processor time per block as a fraction of the block's real-time budget. */
  readonly loadFraction: number;
  /** Safety-limiter gain reduction since the last report, dB (0 = none). */
  readonly limiterReductionDb: number;
}

export type FromProcessor =
  | { readonly type: 'ready' }
  | { readonly type: 'loaded'; readonly slot: Slot; readonly designName: string }
  | { readonly type: 'error'; readonly message: string }
  /** A NaN/Inf was caught: the slot was restored to its operating point and a silent block sent. */
  | { readonly type: 'recovered'; readonly slot: Slot; readonly reason: string }
  | MeterReport;

export const PROCESSOR_NAME = 'valvewright-circuit';
