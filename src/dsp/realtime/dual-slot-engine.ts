// The audio-thread core: two design slots (A, B) run side by side on the same input, so that
// A/B/dry switching is instant and sample-aligned (the dry path is delayed by the oversampling
// latency). Pure TypeScript, no Web Audio types: worklets/circuit.worklet.ts wraps it.
//
// Click-free editing:
// - monitor changes crossfade linearly over CROSSFADE_SECONDS (the gains sum to 1 at every sample);
// - part values (resistor, capacitor: geometric; pot position, tube sample: linear) glide to a new
//   value over SMOOTHING_SECONDS (COMPONENT_SMOOTHING_SECONDS for resistors and capacitors); the
//   engine is recompiled with the glided values every SMOOTHING_STEP_SAMPLES (block boundaries and
//   fixed points inside a block), keeping the circuit's state;
// - a design load, quality change or reset fades the affected output out, swaps in the new
//   engine at a block boundary, and fades in (an unheard slot is swapped at once);
// - scalar gains (input calibration, output scales, master, mute) ramp per sample.
// Engines come from slot plans (circuit/plan.ts): the design compiled and its DC point solved
// off the audio thread (the main thread's plan worker). process() only instantiates a plan
// (copies its arrays, no matrix compile or DC solve: tests/realtime-plan.test.ts forbids both
// inside process()). A message without a plan gets one built by `planner` in handle(), outside
// process(): for tools and tests; the workspace always sends plans.
//
// Allocation: nothing on the per-block path of this file (ramps, meters and update lists are
// pre-allocated), and CircuitEngine.setValues recompiles its matrices in place (tests/
// engine-alloc.test.ts counts the collections during a glide: none).
import {
  partValueUpdates,
  potResistors,
  validateDesign,
  withPart,
  DesignError,
  type Design,
  type Part,
  type PotPart,
  type TubePart,
} from '../circuit/design.ts';
import type { ValueUpdate } from '../circuit/engine.ts';
import { buildSlotPlan, instantiateSlotPlan, validateSlotPlan, type SlotPlan } from '../circuit/plan.ts';
import { importTables } from '../tubes/tables.ts';
import { isOversamplingFactor } from '../render/oversampled.ts';
import { PeakLimiter } from '../render/limiter.ts';
import { Oversampler, type OversamplingFactor } from '../oversampling/oversampler.ts';
import type { FromProcessor, MeterReport, Monitor, Slot, SlotPlans, SlotTrace, ToProcessor } from './messages.ts';
import { LoudnessMatch } from '../analysis/loudness-match.ts';

/**
 * Default live factor: 4x with the averaged root, the lowest factor whose aliases are clearly
 * more than 50 dB down (bench/alias.bench.ts, pentode-triode, 1 V near 1 / 2.5 kHz: -73.3 /
 * -64.1 dB; 2x gives -54.9 / -48.3, short of the goal). Its cost: see loadAtDefault in
 * bench/worklet.browser.bench.ts.
 */
export const DEFAULT_LIVE_FACTOR: OversamplingFactor = 4;
/** The factors offered for live playing (the workspace's choices and the overload guard's steps). */
export const LIVE_FACTORS: readonly OversamplingFactor[] = [1, 2, 4, 8];
export const CROSSFADE_SECONDS = 0.005;
/** Pot and tube-sample glide: fast enough to follow a knob. */
export const SMOOTHING_SECONDS = 0.02;
/** Resistor and capacitor changes (discrete edits) glide longer, so a DC shift they cause
 * (e.g. a new plate load) arrives as a ramp of small steps rather than a thump. */
export const COMPONENT_SMOOTHING_SECONDS = 0.15;
/** Glide step interval: zipper steps shrink with it, each step costs one engine recompile. */
export const SMOOTHING_STEP_SAMPLES = 64;
export const MUTE_SECONDS = 0.001;
/**
 * Live safety mute: with live input on, an output held at least SAFETY_LIMIT_DB into the safety
 * limiter (its gain reduction at the end of every block) for SAFETY_SUSTAIN_SECONDS is muted.
 * Acoustic feedback runs away into the limiter and stays there; so does a level turned up until
 * everything is squashed at the ceiling, which is loud enough to hurt through headphones.
 * (Thresholds: common practice, no source.)
 */
export const SAFETY_LIMIT_DB = 6;
export const SAFETY_SUSTAIN_SECONDS = 1;
export const METER_HZ = 30;
export const LIMITER_CEILING_DBFS = -1;
const DRY_DELAY_CAPACITY = 1024; // power of two, > any oversampler latency in base samples
const SILENT_DBFS = -200;
const FINITE_LIMIT = 1e9; // |slot output| beyond this is treated as a fault, like NaN/Inf
const INPUT_LIMIT = 1e3; // input samples outside ±this (or NaN) are read as 0

/** What a slot needs from a circuit model (the default is an OversampledCircuit). */
export interface SlotModel {
  /** One base-rate sample: input volts to output volts. */
  processSample(vin: number): number;
  /**
   * processSample over src[off … off+len-1] into dst at the same indices: the per-block path
   * (arrays in and out, so no double is boxed per sample).
   */
  processRange(src: Float64Array, dst: Float64Array, off: number, len: number): void;
  readonly latencySamples: number;
  /** Output node voltage at the operating point (subtracted from the output). */
  readonly outputDcVolts: number;
  /** [first-stage grid, plate of each tube in design order] after the last sample, volts. */
  readonly probeValues: Float64Array;
  setValues(updates: readonly ValueUpdate[]): void;
  setSwitch(id: string, closed: boolean): void;
  setTubeSample(id: string, sample: number): void;
  /** Solver counters since the model was built or last reset (CircuitEngine.fallbackSamples / failedSamples). */
  readonly fallbackSamples?: number;
  readonly failedSamples?: number;
  /**
   * Back to the operating point (state only; values stay). With it, a new model is warmed up on a
   * test signal over a few blocks before it is heard (see WARM_BASE_SAMPLES), then reset.
   */
  reset?(): void;
}

/**
 * Base-rate samples a new model runs on a test signal before it is swapped in, a few per block
 * (WARM_CHUNK_MAX at most, fewer while a block's warming takes over WARM_BUDGET_MS): its
 * generated kernels start interpreted and the engine's shared code deoptimises on a new circuit
 * shape, which in one go cost 10-36 ms in the first blocks of a new shape (bench/edit-quanta.bench.ts).
 */
export const WARM_BASE_SAMPLES = 512;
const WARM_CHUNK_MAX = 32;
/** Blocks a warm-up may take (about 0.1 s at 48 kHz): a machine too busy to warm within the budget gets its load anyway. */
const WARM_MAX_BLOCKS = 40;
const WARM_BUDGET_MS = 0.3;
/** The warm-up signal: 0.5 V peak at 220 Hz plus 0.2 V at 1.3 kHz (at 48 kHz), so Newton and the averaged root take their real paths. */
function warmSignal(): Float64Array {
  const x = new Float64Array(WARM_BASE_SAMPLES + WARM_CHUNK_MAX);
  for (let k = 0; k < x.length; k++) x[k] = 0.5 * Math.sin((2 * Math.PI * 220 * k) / 48000) + 0.2 * Math.sin((2 * Math.PI * 1300 * k) / 48000);
  return x;
}
/** Instantiates a plan (on the audio thread: no compile, no DC solve). */
export type ModelFactory = (plan: SlotPlan) => SlotModel;
/** Compiles a design into a plan (off the audio thread, or in handle() for tools and tests). */
export type Planner = (design: Design, baseRateHz: number, factor: OversamplingFactor) => SlotPlan;

const tubesOf = (d: Design): TubePart[] => d.parts.filter((p): p is TubePart => p.kind === 'tube');

/** The default model: the plan's circuit at factor x the base rate (src/dsp/render/oversampled.ts). */
export const planModel: ModelFactory = (plan) => {
  const oc = instantiateSlotPlan(plan);
  // solver counters from the last reset on (a warm-up's are not reported)
  let fallbacks0 = 0,
    failed0 = 0;
  const dc = plan.outputDcVolts;
  return {
    processSample: (v) => oc.processSample(v),
    processRange: (src, dst, off, len) => oc.processRange(src, dst, off, len),
    get latencySamples() {
      return oc.latencySamples;
    },
    get outputDcVolts() {
      return dc;
    },
    get probeValues() {
      return oc.engine.probeValues;
    },
    setValues: (u) => oc.engine.setValues(u),
    setSwitch: (id, closed) => oc.engine.setSwitch(id, closed),
    setTubeSample: (id, s) => oc.engine.setTubeSample(id, s),
    reset: () => {
      oc.reset();
      fallbacks0 = oc.engine.fallbackSamples;
      failed0 = oc.engine.failedSamples;
    },
    get fallbackSamples() {
      return oc.engine.fallbackSamples - fallbacks0;
    },
    get failedSamples() {
      return oc.engine.failedSamples - failed0;
    },
  };
};

/** Live plans: the design at the live tube functions (tables). */
export const livePlanner: Planner = (design, baseRateHz, factor) => buildSlotPlan(design, baseRateHz, factor);

/** Linear per-sample ramp. */
class Ramp {
  value: number;
  target: number;
  private inc = 0;
  private left = 0;
  constructor(v: number) {
    this.value = v;
    this.target = v;
  }
  to(target: number, samples: number): void {
    this.target = target;
    const n = Math.max(0, Math.round(samples));
    if (n === 0 || target === this.value) {
      this.value = target;
      this.left = 0;
      return;
    }
    this.inc = (target - this.value) / n;
    this.left = n;
  }
  jump(v: number): void {
    this.value = v;
    this.target = v;
    this.left = 0;
  }
  get moving(): boolean {
    return this.left > 0;
  }
  /**
   * Advance len samples, multiplying buf[0 … len-1] by the ramp's value at each. One call per
   * segment, no double returned per sample (V8 boxes a double returned from a call it does not
   * inline, and its inlining depends on the caller's size).
   */
  scaleInto(buf: Float64Array, len: number): void {
    let left = this.left;
    if (left === 0) {
      const v = this.value;
      for (let q = 0; q < len; q++) buf[q] = buf[q]! * v;
      return;
    }
    let v = this.value;
    const inc = this.inc,
      target = this.target;
    for (let q = 0; q < len; q++) {
      if (left > 0) {
        left--;
        v = left === 0 ? target : v + inc;
      }
      buf[q] = buf[q]! * v;
    }
    this.left = left;
    this.value = v;
  }
}

type Mutable<T> = { -readonly [K in keyof T]: T[K] };
interface MutableUpdate {
  id: string;
  value: number;
}

/** A part value gliding from `from` to `to` between sample clocks start and start+total. */
interface Glide {
  readonly partId: string;
  readonly kind: 'resistor' | 'capacitor' | 'pot' | 'tube';
  from: number;
  to: number;
  value: number;
  /** Pots: ohms glide (geometric) besides the position. */
  fromOhms: number;
  toOhms: number;
  start: number;
  total: number;
  active: boolean;
  readonly updates: MutableUpdate[];
  readonly pot: Mutable<PotPart> | null;
}

class SlotState {
  design: Design | null = null;
  model: SlotModel | null = null;
  /** The plan the model was made from (fault recovery instantiates it again). */
  plan: SlotPlan | null = null;
  pending: Design | null = null;
  /** Plan for `pending` (always set with it; built for an earlier state of `pending` if values changed since). */
  pendingPlan: SlotPlan | null = null;
  /** Request id of the message that made `pending` ('loaded' carries it). */
  pendingRequest: number | undefined = undefined;
  pendingClear = false;
  /** A model made from pendingPlan, being warmed up before the swap (null: not made yet). */
  warm: SlotModel | null = null;
  /** The design whose values `warm` carries. */
  warmDesign: Design | null = null;
  /** Base samples `warm` has run; the chunk it runs next block. */
  warmDone = 0;
  warmChunk = 1;
  warmBlocks = 0;
  /** A new pending plan: any model warming for the old one is dropped. */
  setPending(design: Design | null, plan: SlotPlan | null): void {
    this.pending = design;
    this.pendingPlan = plan;
    this.warm = null;
    this.warmDesign = null;
    this.warmDone = 0;
    this.warmChunk = 1;
    this.warmBlocks = 0;
  }
  get warmed(): boolean {
    return this.warm !== null && this.warmDone >= WARM_BASE_SAMPLES;
  }
  glides: Glide[] = [];
  glideById = new Map<string, Glide>();
  allUpdates: MutableUpdate[] = [];
  lastStepClock = -Infinity;
  readonly fade = new Ramp(1);
  readonly outScale = new Ramp(1); // 1 / volts at full scale
  dc = 0;
  faultReported = false;
  tubeIds: string[] = [];
  plateVolts: number[] = [];
  /** This slot's entry of MeterReport.slotTraces (reused; its plateVolts is `plateVolts`). */
  readonly trace: { gridVolts: number; plateVolts: number[] } = { gridVolts: 0, plateVolts: [] };
  constructor(readonly name: Slot) {}
}

export interface DualSlotOptions {
  readonly sampleRateHz: number;
  readonly factor?: OversamplingFactor;
  /** Meter reports per second (0: none). */
  readonly meterHz?: number;
  /** Clock for the load measurement, milliseconds. */
  readonly nowMs?: () => number;
  /** See ProcessorInit.safetyMute (default true). */
  readonly safetyMute?: boolean;
  /** Receives reports. The meter report object is reused between calls: copy it to keep it. */
  readonly post?: (m: FromProcessor) => void;
  readonly createModel?: ModelFactory;
  /** Builds plans for messages that bring none (default livePlanner); never called inside process(). */
  readonly planner?: Planner;
  /** Glide times (defaults SMOOTHING_SECONDS, COMPONENT_SMOOTHING_SECONDS; 0: values jump, for comparison). */
  readonly smoothingSeconds?: number;
  readonly componentSmoothingSeconds?: number;
  /** Applied at once, before the first block, without fades. */
  readonly initial?: readonly ToProcessor[];
}

function isObject(x: unknown): x is Record<string, unknown> {
  return typeof x === 'object' && x !== null;
}
/**
 * Bring a model made from `planned` to the values of `d` (same parts and wiring; edits made after
 * the plan was built): one batched value change, switches and tube samples. Not per block.
 */
function applyDesignValues(model: SlotModel, planned: Design, d: Design): void {
  const before = new Map(planned.parts.map((p) => [p.id, p]));
  const updates: ValueUpdate[] = [];
  for (const p of d.parts) {
    const was = before.get(p.id);
    if (was && JSON.stringify(was) === JSON.stringify(p)) continue;
    if (p.kind === 'switch') model.setSwitch(p.id, p.closed);
    else if (p.kind === 'tube') model.setTubeSample(p.id, p.sample);
    else updates.push(...partValueUpdates(p));
  }
  if (updates.length > 0) model.setValues(updates);
}

const isSlot = (x: unknown): x is Slot => x === 'A' || x === 'B';
const finite = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x);
const errMsg = (e: unknown): string => (e instanceof Error ? e.message : String(e));

export class DualSlotEngine {
  readonly sampleRateHz: number;
  private factorNow: OversamplingFactor;
  private readonly post: (m: FromProcessor) => void;
  private readonly nowMs: () => number;
  private readonly safetyMute: boolean;
  private readonly createModel: ModelFactory;
  private readonly planner: Planner;
  private readonly slots: readonly [SlotState, SlotState];
  private readonly xfadeSamples: number;
  private readonly glideSamples: number;
  private readonly componentGlideSamples: number;
  private readonly muteSamples: number;
  // monitor gains
  private monitorTarget: Monitor = 'A';
  private readonly gA = new Ramp(1);
  private readonly gB = new Ramp(0);
  private readonly gDry = new Ramp(0);
  private readonly inCal = new Ramp(1); // volts at full scale
  private readonly master = new Ramp(1);
  private readonly mute = new Ramp(1);
  private readonly globalFade = new Ramp(1);
  private pendingFactor: OversamplingFactor | null = null;
  private pendingReset = false;
  private limiterWanted = true;
  private live = false;
  private readonly limiter: PeakLimiter;
  private readonly dryRing = new Float64Array(DRY_DELAY_CAPACITY);
  private dryPos = 0;
  private dryDelay = 0;
  private clock = 0;
  // meters
  private readonly meterInterval: number;
  private sinceMeter = 0;
  /** Meter accumulators [input peak volts, output peak, busy ms, budget ms] (stores never box). */
  private readonly meterAcc = new Float64Array(4);
  private readonly report: Mutable<MeterReport> & { plateVolts: number[]; slotTraces: [SlotTrace | null, SlotTrace | null] } = {
    type: 'meter',
    inputPeakVolts: 0,
    outputPeakDbfs: SILENT_DBFS,
    gridVolts: 0,
    plateVolts: [],
    loadFraction: 0,
    limiterReductionDb: 0,
    limiterOn: true,
    traceSlot: null,
    slotTraces: [null, null],
    solverFallbackSamples: 0,
    solverFailedSamples: 0,
    matchOffsetDb: null,
    matchGainDb: 0,
    outputLufs: null,
  };
  /** Live A/B loudness match, measured from the slots' own sound (analysis/loudness-match.ts). */
  private readonly match: LoudnessMatch;
  private readonly lvlA = new Float64Array(SMOOTHING_STEP_SAMPLES);
  private readonly lvlB = new Float64Array(SMOOTHING_STEP_SAMPLES);
  private readonly matchGain = new Float64Array(SMOOTHING_STEP_SAMPLES);
  private readonly noPlates: number[] = [];
  /** Warm-up signal and its discarded output (see WARM_BASE_SAMPLES). */
  private readonly warmIn = warmSignal();
  private readonly warmOut = new Float64Array(WARM_BASE_SAMPLES + WARM_CHUNK_MAX);

  constructor(options: DualSlotOptions) {
    const fs = options.sampleRateHz;
    if (!(finite(fs) && fs >= 8000 && fs <= 384000)) throw new Error(`sample rate must be between 8000 and 384000 Hz (got ${String(fs)})`);
    this.sampleRateHz = fs;
    const f = options.factor ?? DEFAULT_LIVE_FACTOR;
    if (!isOversamplingFactor(f)) throw new Error(`oversampling factor must be 1, 2, 4, 8, 16, 32, 64 or 128 (got ${String(f)})`);
    this.factorNow = f;
    this.post = options.post ?? (() => {});
    this.nowMs = options.nowMs ?? (() => Date.now());
    this.safetyMute = options.safetyMute ?? true;
    this.createModel = options.createModel ?? planModel;
    this.planner = options.planner ?? livePlanner;
    this.slots = [new SlotState('A'), new SlotState('B')];
    this.xfadeSamples = Math.round(CROSSFADE_SECONDS * fs);
    this.glideSamples = Math.round((options.smoothingSeconds ?? SMOOTHING_SECONDS) * fs);
    this.componentGlideSamples = Math.round((options.componentSmoothingSeconds ?? COMPONENT_SMOOTHING_SECONDS) * fs);
    this.muteSamples = Math.round(MUTE_SECONDS * fs);
    this.limiter = new PeakLimiter(fs, LIMITER_CEILING_DBFS);
    this.match = new LoudnessMatch(fs);
    const hz = options.meterHz ?? METER_HZ;
    this.meterInterval = hz > 0 ? Math.max(1, Math.round(fs / hz)) : Infinity;
    this.dryDelay = this.latencyFor(f);
    for (const m of options.initial ?? []) this.apply(m, true);
  }

  get factor(): OversamplingFactor {
    return this.factorNow;
  }
  get monitor(): Monitor {
    return this.monitorTarget;
  }
  get limiterOn(): boolean {
    return this.live || this.limiterWanted;
  }
  /** Delay of the dry path, base samples (the rounded oversampling latency). */
  get dryDelaySamples(): number {
    return this.dryDelay;
  }
  /** The design a slot plays (or will play after a pending load), with every edit applied. */
  design(slot: Slot): Design | null {
    const s = this.slot(slot);
    return s.pending ?? s.design;
  }

  private slot(s: Slot): SlotState {
    return s === 'A' ? this.slots[0] : this.slots[1];
  }

  /** Dry-path delay at factor f (memoised: designing the half-bands is not work for process()). */
  private readonly latencies = new Map<OversamplingFactor, number>();
  private latencyFor(f: OversamplingFactor): number {
    let d = this.latencies.get(f);
    if (d === undefined) {
      d = Math.min(DRY_DELAY_CAPACITY - 1, Math.round(new Oversampler(f).latencyBaseSamples));
      this.latencies.set(f, d);
    }
    return d;
  }

  private error(message: string, requestId?: number): void {
    this.post(requestId === undefined ? { type: 'error', message } : { type: 'error', message, requestId });
  }

  /** A message from the main thread (validated; bad ones are answered with an 'error' report). */
  handle(msg: unknown): void {
    this.apply(msg, false);
  }

  private apply(msg: unknown, immediate: boolean): void {
    try {
      this.applyUnsafe(msg, immediate);
    } catch (e) {
      const id = isObject(msg) && typeof msg.requestId === 'number' ? msg.requestId : undefined;
      this.error(e instanceof DesignError ? `design rejected: ${e.message}` : errMsg(e), id);
    }
  }

  /** The factor the slots will run at once pending changes are applied. */
  private get targetFactor(): OversamplingFactor {
    return this.pendingFactor ?? this.factorNow;
  }

  /** A received plan checked against this processor (or one built here for `design`). */
  private planFor(design: Design, plan: unknown, factor: OversamplingFactor): SlotPlan {
    if (plan === undefined) return this.planner(design, this.sampleRateHz, factor);
    const p = validateSlotPlan(plan);
    // its tables are kept whatever becomes of the plan: the main thread sends each table once
    importTables(p.tables);
    if (p.baseRateHz !== this.sampleRateHz || p.factor !== factor) {
      throw new Error(`plan is for ${p.baseRateHz} Hz at ${p.factor}x, the processor runs ${this.sampleRateHz} Hz at ${factor}x`);
    }
    return p;
  }

  /** A slot to be swapped to `design` from `plan` at the next block boundary (or at once). */
  private schedule(s: SlotState, design: Design, plan: SlotPlan, immediate: boolean, requestId: number | undefined): void {
    s.pendingClear = false;
    if (immediate) {
      this.build(s, design, plan, requestId);
      return;
    }
    s.setPending(design, plan);
    s.pendingRequest = requestId;
  }

  /** Plans for both slots' present designs at `factor` (from the message, or built here). */
  private plansFor(plans: SlotPlans | undefined, factor: OversamplingFactor): void {
    if (plans !== undefined && !isObject(plans)) throw new Error('plans must be an object { A?, B? }');
    for (const s of this.slots) {
      const d = s.pending ?? s.design;
      if (!d) continue;
      const given: unknown = plans?.[s.name];
      s.setPending(d, this.planFor(d, given, factor));
    }
  }

  private applyUnsafe(raw: unknown, immediate: boolean): void {
    if (!isObject(raw) || typeof raw.type !== 'string') throw new Error('message must be an object with a "type"');
    const msg = raw as unknown as ToProcessor;
    const needSlot = (s: unknown): SlotState => {
      if (!isSlot(s)) throw new Error(`${msg.type}: slot must be "A" or "B" (got ${JSON.stringify(s)})`);
      return this.slot(s);
    };
    switch (msg.type) {
      case 'load-design': {
        const s = needSlot(msg.slot);
        const d = validateDesign(msg.design);
        this.schedule(s, d, this.planFor(d, msg.plan, this.targetFactor), immediate, msg.requestId);
        return;
      }
      case 'clear-slot': {
        const s = needSlot(msg.slot);
        s.setPending(null, null);
        if (immediate) this.clear(s);
        else s.pendingClear = true;
        return;
      }
      case 'set-part': {
        const s = needSlot(msg.slot);
        if (!isObject(msg.part) || typeof msg.part.id !== 'string') throw new Error('set-part: "part" must be a part with an "id"');
        this.setPart(s, msg.part, immediate, msg.plan, msg.requestId);
        return;
      }
      case 'set-tube-sample': {
        const s = needSlot(msg.slot);
        const base = s.pending ?? s.design;
        const tube = base?.parts.find((p) => p.id === msg.tubeId);
        if (!tube || tube.kind !== 'tube') throw new Error(`set-tube-sample: slot ${s.name} has no tube "${String(msg.tubeId)}"`);
        if (!finite(msg.sample)) throw new Error('set-tube-sample: sample must be a number');
        this.setPart(s, { ...tube, sample: msg.sample }, immediate, undefined, msg.requestId);
        return;
      }
      case 'set-quality': {
        if (!isOversamplingFactor(msg.factor)) throw new Error(`set-quality: factor must be 1, 2, 4, 8, 16, 32, 64 or 128 (got ${JSON.stringify(msg.factor)})`);
        if (msg.factor === this.targetFactor && msg.factor === this.factorNow) return;
        this.plansFor(msg.plans, msg.factor);
        this.latencyFor(msg.factor); // here, not in the block that swaps
        this.pendingFactor = msg.factor;
        if (immediate) this.rebuildAll();
        return;
      }
      case 'monitor': {
        const t = msg.target;
        if (t !== 'A' && t !== 'B' && t !== 'dry') throw new Error(`monitor: target must be "A", "B" or "dry" (got ${JSON.stringify(t)})`);
        this.monitorTarget = t;
        const n = immediate ? 0 : this.xfadeSamples;
        this.gA.to(t === 'A' ? 1 : 0, n);
        this.gB.to(t === 'B' ? 1 : 0, n);
        this.gDry.to(t === 'dry' ? 1 : 0, n);
        return;
      }
      case 'set-input-calibration': {
        const v = msg.voltsAtFullScale;
        if (!(finite(v) && v > 0 && v <= 100)) throw new Error(`set-input-calibration: volts at full scale must be between 0 and 100 (got ${String(v)})`);
        this.inCal.to(v, immediate ? 0 : this.glideSamples);
        return;
      }
      case 'set-output-scale': {
        const s = needSlot(msg.slot);
        const v = msg.voltsAtFullScale;
        if (!(finite(v) && v >= 1e-6 && v <= 1e4)) throw new Error(`set-output-scale: volts at full scale must be between 1e-6 and 1e4 (got ${String(v)})`);
        s.outScale.to(1 / v, immediate ? 0 : this.glideSamples);
        return;
      }
      case 'set-output-level': {
        const db = msg.db;
        if (!(finite(db) && db >= -120 && db <= 24)) throw new Error(`set-output-level: level must be between -120 and +24 dB (got ${String(db)})`);
        this.master.to(Math.pow(10, db / 20), immediate ? 0 : this.glideSamples);
        return;
      }
      case 'set-limiter':
        if (typeof msg.enabled !== 'boolean') throw new Error('set-limiter: "enabled" must be true or false');
        this.limiterWanted = msg.enabled;
        if (msg.enabled === false && this.live) this.error('the safety limiter stays on while live input is on');
        return;
      case 'set-live-input':
        if (typeof msg.live !== 'boolean') throw new Error('set-live-input: "live" must be true or false');
        this.live = msg.live;
        return;
      case 'set-loudness-match':
        if (typeof msg.on !== 'boolean') throw new Error('set-loudness-match: "on" must be true or false');
        this.match.enabled = msg.on;
        return;
      case 'set-mute':
        if (typeof msg.muted !== 'boolean') throw new Error('set-mute: "muted" must be true or false');
        this.mute.to(msg.muted ? 0 : 1, immediate ? 0 : this.muteSamples);
        return;
      case 'reset':
        this.plansFor(msg.plans, this.targetFactor);
        this.pendingReset = true;
        if (immediate) this.rebuildAll();
        return;
      default:
        throw new Error(`unknown message type ${JSON.stringify((msg as { type: unknown }).type)}`);
    }
  }

  private setPart(s: SlotState, part: Part, immediate: boolean, plan: unknown, requestId: number | undefined): void {
    const base = s.pending ?? s.design;
    if (!base) throw new Error(`set-part: slot ${s.name} has no design (load one first)`);
    const old = base.parts.find((p) => p.id === part.id);
    if (!old) throw new Error(`set-part: slot ${s.name} has no part "${part.id}"`);
    if (old.kind !== part.kind) throw new Error(`set-part: ${part.id} is a ${old.kind}, not a ${String(part.kind)}`);
    if (JSON.stringify(old.nodes) !== JSON.stringify(part.nodes)) throw new Error(`set-part: ${part.id} changes its nodes; load a design to rewire`);
    const next = withPart(base, part);
    validateDesign(next);
    const retyped = part.kind === 'tube' && old.kind === 'tube' && old.type !== part.type;
    if (retyped) {
      this.schedule(s, next, this.planFor(next, plan, this.targetFactor), immediate, requestId);
      return;
    }
    if (s.pending) {
      s.pending = next;
      return;
    }
    s.design = next;
    const model = s.model;
    if (!model) return;
    switch (part.kind) {
      case 'switch':
        model.setSwitch(part.id, part.closed);
        return;
      case 'tube':
        this.glideTo(s, part.id, part.sample, 0, immediate);
        return;
      case 'pot':
        this.glideTo(s, part.id, part.position, part.ohms, immediate, part);
        return;
      case 'resistor':
        this.glideTo(s, part.id, part.ohms, 0, immediate);
        return;
      case 'capacitor':
        this.glideTo(s, part.id, part.farads, 0, immediate);
        return;
    }
  }

  private glideTo(s: SlotState, id: string, to: number, toOhms: number, immediate: boolean, pot?: PotPart): void {
    const g = s.glideById.get(id);
    if (!g) return;
    g.from = g.value;
    g.to = to;
    g.fromOhms = g.pot ? g.pot.ohms : 0;
    g.toOhms = toOhms;
    if (g.pot && pot) g.pot.taper = pot.taper;
    g.start = this.clock;
    g.total = immediate ? 0 : g.kind === 'resistor' || g.kind === 'capacitor' ? this.componentGlideSamples : this.glideSamples;
    g.active = true;
    if (immediate) this.stepGlides(s, 0, true);
  }

  /** Advance the glides of a slot to the middle of the coming block; one recompile for all. */
  private stepGlides(s: SlotState, n: number, force: boolean): void {
    const model = s.model;
    if (!model) return;
    let any = false,
      finishing = false;
    const t = this.clock + n / 2;
    for (const g of s.glides) {
      if (!g.active) continue;
      any = true;
      if (t - g.start >= g.total) finishing = true;
    }
    if (!any) return;
    if (!force && !finishing && this.clock - s.lastStepClock < SMOOTHING_STEP_SAMPLES) return;
    s.lastStepClock = this.clock;
    let linear = false;
    for (const g of s.glides) {
      if (!g.active) continue;
      const fr = g.total <= 0 ? 1 : Math.min(1, Math.max(0, (t - g.start) / g.total));
      if (fr >= 1) g.active = false;
      if (g.kind === 'pot' && g.pot) {
        g.value = g.from + (g.to - g.from) * fr;
        g.pot.position = g.value;
        g.pot.ohms = fr >= 1 ? g.toOhms : g.fromOhms * Math.pow(g.toOhms / g.fromOhms, fr);
        const r = potResistors(g.pot);
        g.updates[0]!.value = r.upperOhms;
        if (g.updates.length > 1) g.updates[1]!.value = r.lowerOhms;
        linear = true;
      } else if (g.kind === 'tube') {
        g.value = g.from + (g.to - g.from) * fr;
        model.setTubeSample(g.partId, g.value);
      } else {
        g.value = fr >= 1 ? g.to : g.from * Math.pow(g.to / g.from, fr);
        g.updates[0]!.value = g.value;
        linear = true;
      }
    }
    if (linear) model.setValues(s.allUpdates);
  }

  /**
   * Swap a slot to a model instantiated from `plan` (no compile, no DC solve). If `design` has
   * values the plan was not built with (edits since), they are applied as a value change.
   */
  private build(
    s: SlotState,
    d: Design,
    plan: SlotPlan,
    requestId: number | undefined,
    announce = true,
    warmed?: { model: SlotModel; design: Design },
  ): boolean {
    let model: SlotModel;
    try {
      model = warmed ? warmed.model : this.createModel(plan);
      const from = warmed ? warmed.design : plan.design;
      if (d !== from) applyDesignValues(model, from, d);
    } catch (e) {
      this.error(`slot ${s.name}: could not start "${d.name}": ${errMsg(e)}`, requestId);
      return false;
    }
    s.model = model;
    s.plan = plan;
    s.design = d;
    s.dc = model.outputDcVolts;
    s.faultReported = false;
    s.glides = [];
    s.glideById = new Map();
    s.allUpdates = [];
    s.lastStepClock = -Infinity;
    for (const p of d.parts) {
      if (p.kind !== 'resistor' && p.kind !== 'capacitor' && p.kind !== 'pot' && p.kind !== 'tube') continue;
      const updates: MutableUpdate[] = p.kind === 'tube' ? [] : partValueUpdates(p).map((u) => ({ id: u.id, value: u.value }));
      const value = p.kind === 'resistor' ? p.ohms : p.kind === 'capacitor' ? p.farads : p.kind === 'pot' ? p.position : p.sample;
      const g: Glide = {
        partId: p.id,
        kind: p.kind,
        from: value,
        to: value,
        value,
        fromOhms: p.kind === 'pot' ? p.ohms : 0,
        toOhms: p.kind === 'pot' ? p.ohms : 0,
        start: 0,
        total: 0,
        active: false,
        updates,
        pot: p.kind === 'pot' ? { ...p } : null,
      };
      s.glides.push(g);
      s.glideById.set(p.id, g);
      s.allUpdates.push(...updates);
    }
    const tubes = tubesOf(d);
    s.tubeIds = tubes.map((t) => t.id);
    s.plateVolts = tubes.map(() => 0);
    if (announce) {
      const loaded: FromProcessor = {
        type: 'loaded',
        slot: s.name,
        designName: d.name,
        factor: this.factorNow,
        latencySamples: model.latencySamples,
        tubeIds: s.tubeIds.slice(),
      };
      this.post(requestId === undefined ? loaded : { ...loaded, requestId });
    }
    return true;
  }

  private clear(s: SlotState): void {
    s.model = null;
    s.plan = null;
    s.design = null;
    s.glides = [];
    s.glideById = new Map();
    s.allUpdates = [];
    s.tubeIds = [];
    s.plateVolts = [];
    s.pendingClear = false;
  }

  /** Apply a pending quality change or reset: every slot with a pending plan is swapped. */
  private rebuildAll(): void {
    const f = this.pendingFactor ?? this.factorNow;
    if (f !== this.factorNow) {
      this.factorNow = f;
      this.dryDelay = this.latencyFor(f);
      this.dryRing.fill(0);
    }
    if (this.pendingReset) this.limiter.reset();
    this.pendingFactor = null;
    this.pendingReset = false;
    for (const s of this.slots) {
      const d = s.pending,
        plan = s.pendingPlan,
        warm = s.warm,
        warmDesign = s.warmDesign;
      s.setPending(null, null);
      if (d && plan) this.build(s, d, plan, s.pendingRequest, true, warm && warmDesign ? { model: warm, design: warmDesign } : undefined);
      s.pendingRequest = undefined;
    }
  }

  /**
   * After a NaN/Inf: the slot's plan instantiated again (its operating point), with the present
   * values applied; false (and the slot emptied) if that fails.
   */
  private recover(s: SlotState): boolean {
    const plan = s.plan,
      d = s.design;
    if (!s.model || !plan || !d) return true;
    try {
      const model = this.createModel(plan);
      applyDesignValues(model, plan.design, d);
      s.model = model;
      s.dc = model.outputDcVolts;
      for (const g of s.glides) {
        g.active = false;
        g.from = g.to = g.value;
      }
      return true;
    } catch (e) {
      this.error(`slot ${s.name}: operating point lost (${errMsg(e)}); the slot was emptied`);
      this.clear(s);
      return false;
    }
  }

  private audible(s: SlotState): boolean {
    const g = s.name === 'A' ? this.gA : this.gB;
    return g.value > 0 || g.target > 0;
  }

  /**
   * A pending plan's model: made (one per block at most), then warmed a few samples per block
   * until WARM_BASE_SAMPLES, then reset to its operating point. True once it is ready to swap in.
   */
  private prepare(s: SlotState, mayMake: boolean): boolean {
    const plan = s.pendingPlan,
      d = s.pending;
    if (!plan || !d) return true;
    if (!s.warm) {
      if (!mayMake) return false;
      try {
        const model = this.createModel(plan);
        if (d !== plan.design) applyDesignValues(model, plan.design, d);
        s.warm = model;
        s.warmDesign = d;
        // a model that cannot be reset is not warmed (it would be heard off its operating point)
        if (!model.reset) s.warmDone = WARM_BASE_SAMPLES;
      } catch (e) {
        this.error(`slot ${s.name}: could not start "${d.name}": ${errMsg(e)}`, s.pendingRequest);
        s.setPending(null, null);
        s.pendingRequest = undefined;
        return true;
      }
      return false;
    }
    if (s.warmDone >= WARM_BASE_SAMPLES) return true;
    const n = Math.min(s.warmChunk, WARM_BASE_SAMPLES - s.warmDone);
    const t0 = this.nowMs();
    s.warm.processRange(this.warmIn, this.warmOut, s.warmDone, n);
    const dt = this.nowMs() - t0;
    s.warmDone += n;
    if (++s.warmBlocks >= WARM_MAX_BLOCKS) s.warmDone = WARM_BASE_SAMPLES;
    // next chunk: what fits the budget at this chunk's cost per sample (at most double; a clock
    // too coarse to see the chunk doubles it)
    s.warmChunk = dt > 0 ? Math.max(1, Math.min(WARM_CHUNK_MAX, 2 * n, Math.floor((WARM_BUDGET_MS * n) / dt))) : Math.min(WARM_CHUNK_MAX, 2 * n);
    if (s.warmDone < WARM_BASE_SAMPLES) return false;
    s.warm.reset?.();
    return true;
  }

  /** Block-boundary work: pending loads, quality changes, resets (plans instantiated and warmed, nothing compiled). */
  private boundary(): void {
    const gf = this.globalFade;
    let made = false,
      ready = true;
    for (const s of this.slots) {
      const had = s.warm !== null;
      if (!this.prepare(s, !made)) ready = false;
      if (!had && s.warm !== null) made = true;
    }
    if (this.pendingFactor !== null || this.pendingReset) {
      if (!ready) return;
      if (gf.value === 0 && !gf.moving) {
        this.rebuildAll();
        gf.to(1, this.xfadeSamples);
      } else if (gf.target !== 0) gf.to(0, this.xfadeSamples);
      return;
    }
    for (const s of this.slots) {
      if ((s.pending && s.pendingPlan && s.warmed) || s.pendingClear) {
        if (s.fade.target !== 0) s.fade.to(0, this.audible(s) && s.model ? this.xfadeSamples : 0);
        if (s.fade.value === 0 && !s.fade.moving) {
          if (s.pendingClear) this.clear(s);
          else if (s.pending && s.pendingPlan && s.warm && s.warmDesign) {
            const d = s.pending,
              plan = s.pendingPlan,
              id = s.pendingRequest,
              warmed = { model: s.warm, design: s.warmDesign };
            s.setPending(null, null);
            s.pendingRequest = undefined;
            this.build(s, d, plan, id, true, warmed);
          }
          s.fade.to(1, this.audible(s) ? this.xfadeSamples : 0);
        }
      }
    }
  }

  /**
   * Process n samples: input full-scale samples (mono; null = silence) to output samples.
   * Never writes NaN/Inf. Gliding part values step every SMOOTHING_STEP_SAMPLES within the block.
   */
  process(input: ArrayLike<number> | null, output: { [k: number]: number; length: number }, n: number): void {
    const t0 = this.nowMs();
    this.boundary();
    const A = this.slots[0],
      B = this.slots[1];
    this.faultA = false;
    this.faultB = false;
    for (let off = 0; off < n; off += SMOOTHING_STEP_SAMPLES) {
      const len = Math.min(SMOOTHING_STEP_SAMPLES, n - off);
      this.stepGlides(A, len, false);
      this.stepGlides(B, len, false);
      this.segment(input, output, off, len);
      this.clock += len;
    }
    if (A.model) this.checkFault(A, this.faultA, output, n);
    if (B.model) this.checkFault(B, this.faultB, output, n);
    this.safetyCheck(n);
    const acc = this.meterAcc;
    acc[2] = acc[2]! + (this.nowMs() - t0);
    acc[3] = acc[3]! + (n / this.sampleRateHz) * 1000;
    this.sinceMeter += n;
    if (this.sinceMeter >= this.meterInterval) this.sendMeter();
  }

  /** Samples in a row (block ends) with the live output held SAFETY_LIMIT_DB into the limiter. */
  private limitedSamples = 0;
  private readonly safetyLimitGain = Math.pow(10, -SAFETY_LIMIT_DB / 20);
  private readonly safetyMessage: FromProcessor = {
    type: 'safety-muted',
    reason: `the output stayed pinned at the safety limiter for ${SAFETY_SUSTAIN_SECONDS} s with live input on (feedback, or a level that hurts): output muted`,
  };

  /** Live input only: mute the output when it has been held in the limiter too long (see SAFETY_LIMIT_DB). */
  private safetyCheck(n: number): void {
    if (!this.safetyMute || !this.live || !(this.limiter.gain < this.safetyLimitGain)) {
      this.limitedSamples = 0;
      return;
    }
    this.limitedSamples += n;
    if (this.limitedSamples < SAFETY_SUSTAIN_SECONDS * this.sampleRateHz) return;
    this.limitedSamples = 0;
    this.mute.to(0, this.muteSamples);
    this.post(this.safetyMessage);
  }

  private faultA = false;
  private faultB = false;
  // per-segment scratch (a segment is at most SMOOTHING_STEP_SAMPLES long)
  private readonly vinBuf = new Float64Array(SMOOTHING_STEP_SAMPLES);
  private readonly dryBuf = new Float64Array(SMOOTHING_STEP_SAMPLES);
  private readonly yBufA = new Float64Array(SMOOTHING_STEP_SAMPLES);
  private readonly yBufB = new Float64Array(SMOOTHING_STEP_SAMPLES);
  private readonly gainA = new Float64Array(SMOOTHING_STEP_SAMPLES);
  private readonly gainB = new Float64Array(SMOOTHING_STEP_SAMPLES);
  private readonly gainOut = new Float64Array(SMOOTHING_STEP_SAMPLES);

  private segment(input: ArrayLike<number> | null, output: { [k: number]: number }, off: number, len: number): void {
    const A = this.slots[0],
      B = this.slots[1];
    const mA = A.model,
      mB = B.model;
    const dcA = A.dc,
      dcB = B.dc;
    const ring = this.dryRing,
      mask = DRY_DELAY_CAPACITY - 1,
      delay = this.dryDelay;
    const limit = this.limiterOn,
      lim = this.limiter;
    const meterAcc = this.meterAcc;
    let pos = this.dryPos,
      inPeak = meterAcc[0]!,
      outPeak = meterAcc[1]!;
    let faultA = false,
      faultB = false;
    const vinBuf = this.vinBuf,
      dryBuf = this.dryBuf,
      yA = this.yBufA,
      yB = this.yBufB;
    const gainA = this.gainA,
      gainB = this.gainB,
      gainOut = this.gainOut;
    // Gains for the whole segment first (Ramp.scaleInto: no number returned per sample).
    vinBuf.fill(1, 0, len);
    this.inCal.scaleInto(vinBuf, len);
    const lvlA = this.lvlA,
      lvlB = this.lvlB,
      matchGain = this.matchGain;
    lvlA.fill(1, 0, len);
    A.outScale.scaleInto(lvlA, len);
    lvlB.fill(1, 0, len);
    B.outScale.scaleInto(lvlB, len);
    gainA.fill(1, 0, len);
    A.fade.scaleInto(gainA, len);
    this.gA.scaleInto(gainA, len);
    gainB.fill(1, 0, len);
    B.fade.scaleInto(gainB, len);
    this.gB.scaleInto(gainB, len);
    gainOut.fill(1, 0, len);
    this.master.scaleInto(gainOut, len);
    this.mute.scaleInto(gainOut, len);
    this.globalFade.scaleInto(gainOut, len);
    // Pass 1: calibrated input volts and the delayed dry signal.
    for (let q = 0; q < len; q++) {
      let x = input ? input[off + q]! : 0;
      if (!(x > -INPUT_LIMIT && x < INPUT_LIMIT)) x = 0;
      const vin = x * vinBuf[q]!;
      const av = vin < 0 ? -vin : vin;
      if (av > inPeak) inPeak = av;
      ring[pos] = x;
      dryBuf[q] = ring[(pos - delay) & mask]!;
      pos = (pos + 1) & mask;
      vinBuf[q] = vin;
    }
    this.gDry.scaleInto(dryBuf, len);
    // Pass 2: each slot's circuit over the segment (arrays in and out: nothing boxed per sample).
    if (mA) mA.processRange(vinBuf, yA, 0, len);
    if (mB) mB.processRange(vinBuf, yB, 0, len);
    // Pass 3: each slot levelled (output scale), measured for the A/B loudness match; then fades,
    // B's match gain and the monitor mix into yA, then the limiter over the segment.
    for (let q = 0; q < len; q++) {
      let a = 0,
        b = 0;
      if (mA) {
        a = (yA[q]! - dcA) * lvlA[q]!;
        if (!(a > -FINITE_LIMIT && a < FINITE_LIMIT)) {
          faultA = true;
          a = 0;
        }
      }
      if (mB) {
        b = (yB[q]! - dcB) * lvlB[q]!;
        if (!(b > -FINITE_LIMIT && b < FINITE_LIMIT)) {
          faultB = true;
          b = 0;
        }
      }
      lvlA[q] = a;
      lvlB[q] = b;
    }
    this.match.measure(lvlA, lvlB, len, matchGain);
    for (let q = 0; q < len; q++) yA[q] = (lvlA[q]! * gainA[q]! + lvlB[q]! * matchGain[q]! * gainB[q]! + dryBuf[q]!) * gainOut[q]!;
    if (limit) lim.processInPlace(yA, len);
    this.match.measureOutput(yA, len);
    for (let q = 0; q < len; q++) {
      const y = yA[q]!;
      const ay = y < 0 ? -y : y;
      if (ay > outPeak) outPeak = ay;
      output[off + q] = y;
    }
    this.dryPos = pos;
    meterAcc[0] = inPeak;
    meterAcc[1] = outPeak;
    if (faultA) this.faultA = true;
    if (faultB) this.faultB = true;
  }

  private checkFault(s: SlotState, fault: boolean, output: { [k: number]: number }, n: number): void {
    const m = s.model;
    if (!m) return;
    let bad = fault;
    const pv = m.probeValues;
    for (let i = 0; i < pv.length; i++) if (!Number.isFinite(pv[i]!)) bad = true;
    if (!bad) {
      s.faultReported = false;
      return;
    }
    for (let k = 0; k < n; k++) output[k] = 0;
    this.meterAcc[1] = 0;
    const wasReported = s.faultReported;
    if (this.recover(s)) {
      s.fade.jump(0);
      s.fade.to(1, this.xfadeSamples);
      s.faultReported = true;
    }
    if (!wasReported) this.post({ type: 'recovered', slot: s.name, reason: fault ? 'non-finite output' : 'non-finite node voltage' });
  }

  private sendMeter(): void {
    const r = this.report;
    const traced = this.monitorTarget === 'B' || (this.monitorTarget === 'dry' && !this.slots[0].model) ? this.slots[1] : this.slots[0];
    const acc = this.meterAcc;
    r.inputPeakVolts = acc[0]!;
    r.outputPeakDbfs = acc[1]! > 0 ? Math.max(SILENT_DBFS, 20 * Math.log10(acc[1]!)) : SILENT_DBFS;
    r.loadFraction = acc[3]! > 0 ? acc[2]! / acc[3]! : 0;
    r.limiterReductionDb = this.limiter.minGain < 1 ? -20 * Math.log10(this.limiter.minGain) : 0;
    r.limiterOn = this.limiterOn;
    const off = this.match.offsetDb,
      lo = this.match.out.lufs;
    r.matchOffsetDb = off === off ? off : null;
    r.matchGainDb = this.match.gainDb;
    r.outputLufs = lo > -200 ? lo : null;
    const traces = r.slotTraces;
    let fallbacks = 0,
      failed = 0;
    for (let k = 0; k < 2; k++) {
      const s = this.slots[k]!,
        m = s.model;
      if (!m) {
        traces[k] = null;
        continue;
      }
      fallbacks += m.fallbackSamples ?? 0;
      failed += m.failedSamples ?? 0;
      const pv = m.probeValues,
        pl = s.plateVolts,
        t = s.trace;
      for (let i = 0; i < pl.length; i++) pl[i] = pv[i + 1] ?? 0;
      t.gridVolts = pv[0] ?? 0;
      t.plateVolts = pl;
      traces[k] = t;
    }
    r.solverFallbackSamples = fallbacks;
    r.solverFailedSamples = failed;
    if (traced.model) {
      r.gridVolts = traced.trace.gridVolts;
      r.plateVolts = traced.plateVolts;
      r.traceSlot = traced.name;
    } else {
      r.gridVolts = 0;
      r.plateVolts = this.noPlates;
      r.traceSlot = null;
    }
    this.post(r);
    this.sinceMeter = Math.min(this.sinceMeter - this.meterInterval, this.meterInterval);
    this.meterAcc.fill(0);
    this.limiter.minGain = 1;
  }
}
