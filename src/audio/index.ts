/**
 * Main-thread audio engine (Tone.js graph around the circuit AudioWorklet), made of parts with
 * one job each: settings.ts (the settings, held once), requests.ts + planner.ts (messages in
 * order, designs compiled off the audio thread, replies by request id), player.ts (file
 * player), live-input.ts (live input), take.ts (take recorder), cabinet.ts, idle.ts (idle
 * policy), meters.ts (reports, peaks, spectrum, scope).
 *
 *   const audio = await createAudioEngine({ factor?, context?, scopeCapacity?, fftSize?, settings? });
 *
 * Designs and settings (each sends one typed ToProcessor message; see src/dsp/realtime/messages.ts)
 *   loadDesign(slot, design, { outputVoltsAtFullScale? }): Promise<LoadedInfo>
 *       validated here first (throws DesignError); without a scale, the output level is estimated
 *       (estimateOutputVoltsAtFullScale at the present input calibration) so A and B sit alike.
 *   clearSlot(slot) · setPart(slot, part) · setTubeSample(slot, tubeId, sample)
 *   setMonitor('A' | 'B' | 'dry') · setQuality(1|2|4|8|16|32) · setInputCalibration(volts)
 *   setOutputScale(slot, volts) · setOutputLevel(db) · setLimiter(on) · setMuted(muted) · reset()
 * File player
 *   loadFile(bytes: ArrayBuffer | Blob): Promise<SourceInfo>   (decodeAudioData: any rate, resampled)
 *   setSource(samples: Float32Array, sampleRateHz): SourceInfo
 *   play() · stop() · playing · positionSeconds() · setLoop({ startSeconds, endSeconds } | null)
 * Live input (starts muted; LIVE_INPUT_WARNING is the text to show first)
 *   startLive({ deviceId?, channel? }): Promise<void>  rejects with LiveInputError (one line) if denied or absent;
 *                                       channel: 1 or 2 of the interface, or 'mix' (both, averaged; default)
 *   listInputs(): Promise<LiveInputDevice[]>  audio inputs (labels once access was granted)
 *       the rest of the graph keeps working. Echo cancellation, noise suppression, AGC off.
 *   setLiveMuted(muted)  acts at once (input gain ramps in 2 ms) · stopLive() · live: 'off'|'muted'|'on'
 *       While live input is on, the processor keeps its safety limiter on whatever setLimiter says.
 * Cabinet
 *   loadCabinet(source: string (URL) | ArrayBuffer | { samples, sampleRateHz } | null): Promise<void>
 *       convolved at its real level (Tone.Convolver, normalize off); null bypasses.
 * Meters and analysers
 *   onReport(listener): unsubscribe    every FromProcessor message (meter ~30 Hz, loaded, error, recovered)
 *   latestMeter: MeterReport | null · levels(): { inputVolts, outputDbfs } (peaks since last call)
 *   spectrum(into: Float32Array): { ok, binHertz }   dB per bin of the output (fftSize / 2 bins)
 *   scope: ScopeBuffer                  grid and plate traces of the monitored slot (meter rate)
 * Offline (same graph on an OfflineAudioContext, present settings, cabinet included)
 *   renderOffline({ input, sampleRateHz?, tailSeconds?, overrides? }): Promise<AudioBuffer>
 *   renderOfflineSamples(...same): Promise<Float32Array>
 * dispose(): Promise<void>
 */
import * as Tone from 'tone';
import { designCircuit, validateDesign, type Design, type Part } from '../dsp/circuit/design.ts';
import { estimateOutputVoltsAtFullScale } from '../dsp/render/levelling.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';
import type { FromProcessor, MeterReport, Monitor, ProcessorInit, Slot, ToProcessor } from '../dsp/realtime/messages.ts';
import { planTransferables, withoutSentTables, type SlotPlan } from '../dsp/circuit/plan.ts';
import { buildGraph, type Graph } from './graph.ts';
import type { ScopeBuffer } from './scope.ts';
import takeWorkletUrl from '../../worklets/take.worklet.ts?worker&url';
import { TAKE_PROCESSOR_NAME } from '../dsp/realtime/take-messages.ts';
import { TakeDeck, type Take } from './take.ts';
import { Planner } from './planner.ts';
import { Outbox, PendingReplies, type LoadedInfo } from './requests.ts';
import { monoBuffer, resampleBuffer } from './buffers.ts';
import { AudioSettings } from './settings.ts';
import { IdlePolicy, IDLE_SUSPEND_SECONDS } from './idle.ts';
import { Meters } from './meters.ts';
import { Cabinet, type CabinetSource } from './cabinet.ts';
import { FilePlayer, type LoopRegion, type SourceInfo } from './player.ts';
import { LiveInput, type LiveInputDevice, type LiveInputOptions } from './live-input.ts';

export { ScopeBuffer } from './scope.ts';
export { buildGraph, loadWorklet, type Graph } from './graph.ts';
export { monoBuffer } from './buffers.ts';
export { AudioSettings } from './settings.ts';
export { IDLE_SUSPEND_SECONDS } from './idle.ts';
export { LIVE_INPUT_WARNING, LiveInputError, type LiveChannel, type LiveInputDevice, type LiveInputOptions } from './live-input.ts';
export type { LoadedInfo } from './requests.ts';
export type { SourceInfo, LoopRegion } from './player.ts';
export type { CabinetSource } from './cabinet.ts';

export interface LiveLatency {
  readonly inputSeconds: number;
  readonly processingSeconds: number;
  readonly outputSeconds: number;
  readonly totalSeconds: number;
}

export interface AudioEngineOptions {
  /** Oversampling factor to start with (overrides the settings' factor). */
  readonly factor?: OversamplingFactor;
  /** A native AudioContext to use (default: a new one, latencyHint 'interactive'). */
  readonly context?: AudioContext;
  /** Seconds of idleness before a context made here is suspended (default IDLE_SUSPEND_SECONDS; tests use less). */
  readonly idleSuspendSeconds?: number;
  /** Meter reports kept by the scope (default 300, 10 s at 30 Hz). */
  readonly scopeCapacity?: number;
  readonly fftSize?: number;
  /** Input calibration to start with, volts at full scale (overrides the settings'; default DEFAULT_INPUT_VOLTS_AT_FULL_SCALE). */
  readonly inputVoltsAtFullScale?: number;
  /** The settings to start from and keep up to date (the workspace holds them; default: new ones). */
  readonly settings?: AudioSettings;
}

export interface OfflineRenderOptions {
  /** Mono samples (full scale 1) or an AudioBuffer (its channels are mixed by the processor). */
  readonly input: Float32Array | AudioBuffer;
  /** Rate of a Float32Array input and of the render (default: the AudioBuffer's rate or 48000). */
  readonly sampleRateHz?: number;
  /** Extra seconds rendered after the input ends (default 0). */
  readonly tailSeconds?: number;
  /** Messages applied after the present settings (e.g. a different monitor). */
  readonly overrides?: readonly ToProcessor[];
}

export interface AudioEngine {
  readonly context: AudioContext;
  readonly sampleRateHz: number;
  loadDesign(slot: Slot, design: Design, options?: { readonly outputVoltsAtFullScale?: number }): Promise<LoadedInfo>;
  clearSlot(slot: Slot): void;
  setPart(slot: Slot, part: Part): void;
  setTubeSample(slot: Slot, tubeId: string, sample: number): void;
  setMonitor(target: Monitor): void;
  setQuality(factor: OversamplingFactor): void;
  setInputCalibration(voltsAtFullScale: number): void;
  setOutputScale(slot: Slot, voltsAtFullScale: number): void;
  /** Live A/B loudness match (B follows A by its measured loudness; the meter report carries the offset). */
  setLoudnessMatch(on: boolean): void;
  setOutputLevel(db: number): void;
  setLimiter(enabled: boolean): void;
  setMuted(muted: boolean): void;
  reset(): void;
  /** Messages still waiting for a plan from the planner (or behind one): 0 once every edit has reached the processor. */
  readonly sending: number;
  loadFile(bytes: ArrayBuffer | Blob): Promise<SourceInfo>;
  setSource(samples: Float32Array, sampleRateHz: number): SourceInfo;
  play(): Promise<void>;
  stop(): void;
  readonly playing: boolean;
  positionSeconds(): number;
  setLoop(region: LoopRegion | null): void;
  startLive(options?: LiveInputOptions): Promise<void>;
  /** Start recording the live input (the DI, before the circuit) as a take; live input must be on. */
  startTake(): void;
  /** Stop recording and get the take (empty if none was recording). */
  stopTake(): Promise<Take>;
  /** Seconds recorded in the running take, or null when none is recording. */
  readonly takeSeconds: number | null;
  /** Called with a take that stopped by itself (at MAX_TAKE_SECONDS, or because live input stopped). */
  onTakeEnded(listener: (t: Take) => void): void;
  /** The context is suspended for want of anything to do (see IDLE_SUSPEND_SECONDS); play, live input or any message resumes it. */
  readonly idle: boolean;
  /** Called when `idle` changes (the context's own statechange event). */
  onIdleChange(listener: (idle: boolean) => void): () => void;
  /** The audio inputs the browser offers (labels only after access was granted once). */
  listInputs(): Promise<LiveInputDevice[]>;
  /** Channels of the running live input (0 when off). */
  readonly liveChannels: number;
  /**
   * Where the live path's delay comes from, seconds: the input device (as the browser reports it;
   * 0 where it does not), the processor's oversampling filters (the slot heard, or the larger),
   * and the context's output buffering (baseLatency + outputLatency). null while live input is off.
   */
  liveLatency(): LiveLatency | null;
  setLiveMuted(muted: boolean): void;
  stopLive(): void;
  readonly live: 'off' | 'muted' | 'on';
  loadCabinet(source: CabinetSource): Promise<void>;
  /** The settings this engine sends and keeps (the object given in the options, or its own). */
  readonly settings: AudioSettings;
  onReport(listener: (m: FromProcessor) => void): () => void;
  readonly latestMeter: MeterReport | null;
  levels(): { inputVolts: number; outputDbfs: number };
  spectrum(into: Float32Array): { ok: boolean; binHertz: number };
  readonly scope: ScopeBuffer;
  renderOffline(options: OfflineRenderOptions): Promise<AudioBuffer>;
  renderOfflineSamples(options: OfflineRenderOptions): Promise<Float32Array>;
  dispose(): Promise<void>;
}

/**
 * Render the graph offline: the same processor, cabinet and safety stage as live.
 * `init` is the processor state at frame 0 (applied before the first block, without fades).
 */
export async function renderGraphOffline(
  init: ProcessorInit,
  input: Float32Array | AudioBuffer,
  options: { sampleRateHz?: number; tailSeconds?: number; cabinet?: AudioBuffer | null } = {},
): Promise<AudioBuffer> {
  const rate = options.sampleRateHz ?? (input instanceof AudioBuffer ? input.sampleRate : 48000);
  const buf = input instanceof AudioBuffer ? input : await monoBuffer(input, rate, rate);
  if (buf.sampleRate !== rate) throw new Error(`input buffer is at ${buf.sampleRate} Hz, render asked for ${rate} Hz`);
  const tail = options.tailSeconds ?? 0;
  if (!(tail >= 0 && tail <= 60)) throw new Error(`tailSeconds must be between 0 and 60 (got ${tail})`);
  const length = buf.length + Math.round(tail * rate);
  const ctx = new Tone.OfflineContext(new OfflineAudioContext(1, length, rate));
  const graph = await buildGraph(ctx, { ...init, meterHz: 0 });
  if (options.cabinet) graph.setCabinet(await resampleBuffer(options.cabinet, rate));
  const src = ctx.rawContext.createBufferSource();
  src.buffer = buf;
  Tone.connect(src, graph.input);
  src.start(0);
  const rendered = await ctx.render(false);
  const out = rendered.get();
  graph.dispose();
  if (!out) throw new Error('offline render produced no buffer');
  return out;
}

/** The engine: the parts (player, live input, take deck, cabinet, idle policy, meters) around one graph. */
export async function createAudioEngine(options: AudioEngineOptions = {}): Promise<AudioEngine> {
  const raw = options.context ?? new AudioContext({ latencyHint: 'interactive' });
  // A native context given to Tone: no wrapping of the worklet source (toolchain notes).
  const ctx = new Tone.Context(raw);
  const fs = raw.sampleRate;
  const state = options.settings ?? new AudioSettings();
  if (options.factor !== undefined) state.factor = options.factor;
  if (options.inputVoltsAtFullScale !== undefined) state.inputVolts = options.inputVoltsAtFullScale;
  // the processor starts from the settings' factor, levels and monitor (designs come as plans)
  const initial = state.messages().filter((m) => m.type !== 'load-design');
  const graph: Graph = await buildGraph(
    ctx,
    { factor: state.factor, initial: [...initial, { type: 'set-loudness-match', on: state.loudnessMatch }] },
    options.fftSize ?? 4096,
  );
  const meters = new Meters(graph, options.scopeCapacity ?? 300);
  const takes = await TakeDeck.attach(raw, takeWorkletUrl, TAKE_PROCESSOR_NAME);
  const cabinet = new Cabinet(graph, raw);
  // Designs reach the processor as plans built off the audio thread (planner.ts); messages keep
  // their order while a plan is built (requests.ts), and replies are matched by request id.
  const planner = new Planner();
  const replies = new PendingReplies();
  // Plans go out without the tube tables this processor already has, their buffers transferred
  // (not copied): the processor's message handler runs on the audio thread.
  const sentTables = new Set<string>();
  const outbox = new Outbox((m) => {
    const plans = m.type === 'load-design' || m.type === 'set-part' ? [m.plan] : m.type === 'set-quality' || m.type === 'reset' ? [m.plans?.A, m.plans?.B] : [];
    graph.send(m, [...new Set(plans.flatMap((p) => (p ? planTransferables(p) : [])))]);
  });
  const idle: IdlePolicy = new IdlePolicy(raw, !options.context, (): boolean => player.playing || live.on, options.idleSuspendSeconds ?? IDLE_SUSPEND_SECONDS);
  const player = new FilePlayer(ctx, graph.input, () => idle.wake());
  const send = (m: ToProcessor | Promise<ToProcessor | null>) => {
    outbox.send(m);
    idle.wake();
  };
  const live: LiveInput = new LiveInput(
    ctx,
    raw,
    graph.input,
    takes,
    () => idle.start(),
    () => send({ type: 'set-live-input', live: false }),
  );

  /** The processor muted its output for safety and waits for the user (see 'safety-muted'). */
  let safetyHeld = false;
  const releaseSafety = (): void => {
    if (!safetyHeld) return;
    safetyHeld = false;
    graph.send({ type: 'set-mute', muted: state.outputMuted });
  };
  /** Oversampling filter latency of each slot's processor, base-rate samples (from 'loaded'). */
  const processingLatencySamples: Partial<Record<Slot, number>> = {};
  graph.circuit.port.onmessage = (e: MessageEvent<FromProcessor>) => {
    const m = e.data;
    if (m.type === 'safety-muted') {
      // the processor muted its output: mute the live input here too (breaking a feedback loop).
      // The output stays muted (the circuit's tail at a level that pinned the limiter is loud)
      // until the user unmutes the live input or stops it.
      safetyHeld = true;
      if (live.on) engine.setLiveMuted(true);
    } else if (m.type === 'loaded') processingLatencySamples[m.slot] = m.latencySamples;
    replies.settle(m);
    meters.receive(m);
  };

  /**
   * `make(plan)` once the planner has compiled `design` at the present factor. If it cannot be
   * compiled, nothing is sent: request `id` fails and the listeners get the error as the
   * processor would have reported it.
   */
  const sendPlanned = (slot: Slot, design: Design, id: number, make: (plan: SlotPlan) => ToProcessor): void => {
    send(
      planner.plan(design, fs, state.factor).then(
        (plan) => make(withoutSentTables(plan, sentTables)),
        (e: unknown) => {
          const message = `slot ${slot}: ${e instanceof Error ? e.message : String(e)}`;
          replies.fail(id, new Error(message));
          meters.receive({ type: 'error', message, requestId: id });
          return null;
        },
      ),
    );
  };
  /** Plans for both slots' present designs at the present factor (a slot whose plan fails goes without: the processor reports why). */
  const withPlans = async <M extends ToProcessor>(m: M): Promise<M> => {
    const plans: { A?: SlotPlan; B?: SlotPlan } = {};
    await Promise.all(
      (['A', 'B'] as const).map(async (slot) => {
        const d = state.designs[slot];
        if (d)
          try {
            plans[slot] = await planner.plan(d, fs, state.factor);
          } catch {
            /* reported by the processor */
          }
      }),
    );
    // tables stripped in slot order once both are here (the posting order)
    for (const slot of ['A', 'B'] as const) {
      const p = plans[slot];
      if (p) plans[slot] = withoutSentTables(p, sentTables);
    }
    return { ...m, plans };
  };

  const engine: AudioEngine = {
    context: raw,
    sampleRateHz: fs,
    settings: state,
    async loadDesign(slot, design, opts) {
      const d = validateDesign(design);
      const scale = opts?.outputVoltsAtFullScale ?? estimateOutputVoltsAtFullScale(designCircuit(d), fs, state.inputVolts);
      state.designs[slot] = d;
      state.outputScale[slot] = scale;
      const { id, reply } = replies.open();
      sendPlanned(slot, d, id, (plan) => ({ type: 'load-design', slot, design: d, plan, requestId: id }));
      send({ type: 'set-output-scale', slot, voltsAtFullScale: scale });
      return reply;
    },
    clearSlot(slot) {
      delete state.designs[slot];
      send({ type: 'clear-slot', slot });
    },
    setPart(slot, part) {
      const d = state.designs[slot];
      const old = d?.parts.find((p) => p.id === part.id);
      const next = d ? { ...d, parts: d.parts.map((p) => (p.id === part.id ? part : p)) } : undefined;
      if (next) state.designs[slot] = next;
      const id = replies.id();
      // a new tube type is a new circuit: compiled off the audio thread, swapped in by the processor
      if (next && old?.kind === 'tube' && part.kind === 'tube' && old.type !== part.type)
        sendPlanned(slot, next, id, (plan) => ({ type: 'set-part', slot, part, plan, requestId: id }));
      else send({ type: 'set-part', slot, part, requestId: id });
    },
    setTubeSample(slot, tubeId, sample) {
      const d = state.designs[slot];
      if (d) state.designs[slot] = { ...d, parts: d.parts.map((p) => (p.id === tubeId && p.kind === 'tube' ? { ...p, sample } : p)) };
      send({ type: 'set-tube-sample', slot, tubeId, sample });
    },
    setMonitor(target) {
      state.monitor = target;
      send({ type: 'monitor', target });
    },
    setQuality(factor) {
      state.factor = factor;
      send(withPlans({ type: 'set-quality', factor }));
    },
    setInputCalibration(v) {
      state.inputVolts = v;
      send({ type: 'set-input-calibration', voltsAtFullScale: v });
    },
    setOutputScale(slot, v) {
      state.outputScale[slot] = v;
      send({ type: 'set-output-scale', slot, voltsAtFullScale: v });
    },
    setLoudnessMatch(on) {
      state.loudnessMatch = on;
      send({ type: 'set-loudness-match', on });
    },
    setOutputLevel(db) {
      state.levelDb = db;
      send({ type: 'set-output-level', db });
    },
    setLimiter(on) {
      state.limiter = on;
      send({ type: 'set-limiter', enabled: on });
    },
    setMuted(muted) {
      state.outputMuted = muted;
      send({ type: 'set-mute', muted });
      graph.output.gain.cancelScheduledValues(ctx.currentTime);
      graph.output.gain.rampTo(muted ? 0 : 1, 0.002);
    },
    reset() {
      send(withPlans({ type: 'reset' }));
    },
    get sending() {
      return outbox.pending;
    },
    loadFile: (bytes) => player.loadFile(bytes),
    setSource: (samples, rateHz) => player.setSource(samples, rateHz),
    async play() {
      if (!player.hasSource) throw new Error('no audio file loaded: load one before playing');
      await idle.start();
      player.play();
    },
    stop() {
      player.stop();
      idle.wake();
    },
    get idle() {
      return idle.idle;
    },
    onIdleChange: (listener) => idle.onChange(listener),
    get playing() {
      return player.playing;
    },
    positionSeconds: () => player.positionSeconds(),
    setLoop: (region) => player.setLoop(region),
    async startLive(opts = {}) {
      if (live.on) return;
      await live.start(opts);
      send({ type: 'set-live-input', live: true });
    },
    setLiveMuted(muted) {
      if (!muted) releaseSafety();
      live.setMuted(muted);
    },
    stopLive() {
      releaseSafety();
      live.stop();
    },
    get live() {
      return live.state;
    },
    get liveChannels() {
      return live.channels;
    },
    startTake() {
      takes.start(live.on);
    },
    stopTake: () => takes.stop(),
    get takeSeconds() {
      return takes.seconds;
    },
    onTakeEnded(listener: (t: Take) => void) {
      takes.onEnded(listener);
    },
    liveLatency() {
      if (!live.on) return null;
      const input = live.deviceLatencySeconds;
      const heard =
        state.monitor === 'dry' ? Math.max(processingLatencySamples.A ?? 0, processingLatencySamples.B ?? 0) : (processingLatencySamples[state.monitor] ?? 0);
      const ac = raw as AudioContext & { outputLatency?: number };
      const output = (ac.baseLatency ?? 0) + (typeof ac.outputLatency === 'number' ? ac.outputLatency : 0);
      const processing = heard / fs;
      return { inputSeconds: input, processingSeconds: processing, outputSeconds: output, totalSeconds: input + processing + output };
    },
    listInputs: (): Promise<LiveInputDevice[]> => LiveInput.list(),
    loadCabinet: (src) => cabinet.load(src),
    onReport: (l) => meters.onReport(l),
    get latestMeter(): MeterReport | null {
      return meters.latestMeter;
    },
    // while live input is muted the input meter reads the device before its mute gain, so the
    // interface gain can be set before anything is heard
    levels: () => meters.levels(live.peakWhileMuted() * state.inputVolts),
    spectrum: (into) => meters.spectrum(into, fs),
    get scope(): ScopeBuffer {
      return meters.scope;
    },
    async renderOffline(o) {
      const init: ProcessorInit = { factor: state.factor, initial: [...state.messages(), ...(o.overrides ?? [])] };
      return renderGraphOffline(init, o.input, {
        ...(o.sampleRateHz !== undefined ? { sampleRateHz: o.sampleRateHz } : {}),
        ...(o.tailSeconds !== undefined ? { tailSeconds: o.tailSeconds } : {}),
        cabinet: cabinet.buffer,
      });
    },
    async renderOfflineSamples(o) {
      const b = await engine.renderOffline(o);
      return b.getChannelData(0).slice();
    },
    async dispose() {
      engine.stopLive();
      idle.dispose();
      player.dispose();
      live.dispose();
      graph.dispose();
      planner.dispose();
      replies.rejectAll(new Error('audio engine disposed'));
      // Tone's Context.dispose closes the native context too: only for a context made here.
      if (!options.context) {
        ctx.dispose();
        if (raw.state !== 'closed') await raw.close();
      }
    },
  };
  return engine;
}
