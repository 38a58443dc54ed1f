// Typed messages between the main thread and the audio-thread processor: one discriminated
// union each way, shared by worklets/ and src/audio/.
import type { Design, Part } from '../circuit/design.ts';
import type { SlotPlan } from '../circuit/plan.ts';
import type { OversamplingFactor } from '../oversampling/oversampler.ts';

export type Slot = 'A' | 'B';
export type Monitor = Slot | 'dry';

/**
 * Every message may carry a request id; the processor's reply to it ('loaded', or 'error' when
 * it is refused) carries the same id, so the main thread matches replies by id, never by text.
 */
export interface Request {
  readonly requestId?: number;
}

/** Plans (circuit/plan.ts) compiled off the audio thread, one per slot. */
export interface SlotPlans {
  readonly A?: SlotPlan;
  readonly B?: SlotPlan;
}

export type ToProcessor = Request &
  /**
   * Replace a slot's design (faded out and in at a block boundary; the slot starts at its
   * operating point). `plan` is the design compiled off the audio thread at the processor's rate
   * and factor; without one the processor compiles it in its message handler (tools and tests
   * only: that stalls the audio thread).
   */
  (
    | { readonly type: 'load-design'; readonly slot: Slot; readonly design: Design; readonly plan?: SlotPlan }
    /** Empty a slot (it outputs silence and costs nothing). */
    | { readonly type: 'clear-slot'; readonly slot: Slot }
    /** New value of one part (resistor, capacitor, pot position/value, switch, tube sample): smoothed, the circuit keeps its state. A tube type change swaps in `plan` (the edited design compiled off the audio thread). */
    | { readonly type: 'set-part'; readonly slot: Slot; readonly part: Part; readonly plan?: SlotPlan }
    | { readonly type: 'set-tube-sample'; readonly slot: Slot; readonly tubeId: string; readonly sample: number }
    /** Oversampling factor of both slots (both are swapped for `plans` at the new factor behind a short fade). */
    | { readonly type: 'set-quality'; readonly factor: OversamplingFactor; readonly plans?: SlotPlans }
    /** What is heard: slot A, slot B or the dry input; crossfaded over a few milliseconds. */
    | { readonly type: 'monitor'; readonly target: Monitor }
    /** Input samples at full scale stand for this many volts at the circuit input (peak). */
    | { readonly type: 'set-input-calibration'; readonly voltsAtFullScale: number }
    /** Output volts (deviation from the operating point) that map to full scale, per slot (loudness matching sets these). */
    | { readonly type: 'set-output-scale'; readonly slot: Slot; readonly voltsAtFullScale: number }
    /** Master output level in dB (applied before the safety limiter). */
    | { readonly type: 'set-output-level'; readonly db: number }
    /** Safety limiter wanted (ignored while live input is on: then it is always on). */
    | { readonly type: 'set-limiter'; readonly enabled: boolean }
    /** Live input forces the safety limiter on; files may bypass it. */
    | { readonly type: 'set-live-input'; readonly live: boolean }
    | { readonly type: 'set-mute'; readonly muted: boolean }
    /** Live A/B loudness match on or off: B's gain follows its measured loudness against A's (analysis/loudness-match.ts). */
    | { readonly type: 'set-loudness-match'; readonly on: boolean }
    /** Both slots back to their operating points (behind a short fade): `plans` for the present designs. */
    | { readonly type: 'reset'; readonly plans?: SlotPlans }
  );

export interface MeterReport {
  readonly type: 'meter';
  /** Peak of the circuit input since the last report, volts. */
  readonly inputPeakVolts: number;
  /** Peak of the output since the last report, dBFS (-Infinity is sent as -200). */
  readonly outputPeakDbfs: number;
  /** First stage control-grid voltage of the monitored slot (or A when dry), volts, at report time. */
  readonly gridVolts: number;
  /** Plate voltages of the monitored slot's tubes, in design order, volts. */
  readonly plateVolts: readonly number[];
  /** Processor time per block as a fraction of the block's real-time budget (mean since the last report). */
  readonly loadFraction: number;
  /** Safety-limiter gain reduction since the last report, dB (0 = none). */
  readonly limiterReductionDb: number;
  /** Whether the safety limiter is in the signal path. */
  readonly limiterOn: boolean;
  /** Which slot the grid and plate values come from (null: that slot is empty). */
  readonly traceSlot: Slot | null;
  /**
   * Both slots' grid and plate voltages at report time, whatever is monitored ([0] slot A, [1]
   * slot B; null where the slot is empty): a slot's scope stays that slot's while A/B/dry switch.
   */
  readonly slotTraces: readonly [SlotTrace | null, SlotTrace | null];
  /**
   * Circuit solver counters, totals over both slots' present circuits since each was built, in
   * circuit (oversampled) samples: samples whose solve needed the fallback (continuation), and
   * samples that still failed (their state was held). Absent from models that do not count.
   */
  readonly solverFallbackSamples?: number;
  readonly solverFailedSamples?: number;
  /**
   * B's loudness against A's, each as its slot makes it (output scale applied, before the match
   * gain and the monitor mix), over a 3 s window, dB; null while either is silent.
   */
  readonly matchOffsetDb?: number | null;
  /** The match gain applied to B now, dB (0 with the match off). */
  readonly matchGainDb?: number;
  /** Loudness of the output (after the limiter) over the same 3 s window, LUFS; null while silent. */
  readonly outputLufs?: number | null;
}

/** One slot's traced node voltages in a meter report. */
export interface SlotTrace {
  /** First stage control-grid voltage, volts. */
  readonly gridVolts: number;
  /** Plate voltages of the slot's tubes, in design order, volts. */
  readonly plateVolts: readonly number[];
}

export type FromProcessor =
  | { readonly type: 'ready'; readonly sampleRateHz: number; readonly factor: OversamplingFactor }
  | {
      readonly type: 'loaded';
      readonly slot: Slot;
      readonly designName: string;
      readonly factor: OversamplingFactor;
      /** The request that asked for this design (load-design, or set-part changing a tube type). */
      readonly requestId?: number;
      /** Round-trip latency of the oversampling filters, base-rate samples (the dry path is delayed by its rounded value). */
      readonly latencySamples: number;
      /** Tube ids in design order (the order of MeterReport.plateVolts). */
      readonly tubeIds: readonly string[];
    }
  /** A refused message (requestId: its id) or a failure of the processor's own (no id). */
  | { readonly type: 'error'; readonly message: string; readonly requestId?: number }
  /** A NaN/Inf was caught: the slot was restored to its operating point and a silent block sent. */
  | { readonly type: 'recovered'; readonly slot: Slot; readonly reason: string }
  /**
   * With live input on, the output stayed pinned at the safety limiter (SAFETY_LIMIT_DB of
   * reduction for SAFETY_SUSTAIN_SECONDS): the processor muted its output (likely acoustic
   * feedback, or a level that hurts). The main thread then mutes the live input and lifts the
   * output mute; the user unmutes as usual.
   */
  | { readonly type: 'safety-muted'; readonly reason: string }
  | MeterReport;

/** Given to the processor at construction (AudioWorkletNodeOptions.processorOptions). */
export interface ProcessorInit {
  /** Messages applied at once, before the first block (no fades): an offline render starts exactly in this state. */
  readonly initial?: readonly ToProcessor[];
  /** Oversampling factor before any set-quality. */
  readonly factor?: OversamplingFactor;
  /** Meter reports per second (default 30; 0 = none). */
  readonly meterHz?: number;
  /**
   * Mute on an output pinned in the limiter while live input is on (default true). Off for the
   * graph's post-cabinet safety stage, which turns live mode on only to lock its limiter and has
   * no listener for the report.
   */
  readonly safetyMute?: boolean;
}

export const PROCESSOR_NAME = 'valvewright-circuit';
