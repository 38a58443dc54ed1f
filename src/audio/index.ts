/**
 * Main-thread audio engine (Tone.js graph around the circuit AudioWorklet).
 *
 *   const audio = await createAudioEngine({ factor?, context?, scopeCapacity?, fftSize? });
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
import { DEFAULT_LIVE_FACTOR } from '../dsp/realtime/dual-slot-engine.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';
import type { FromProcessor, MeterReport, Monitor, ProcessorInit, Slot, ToProcessor } from '../dsp/realtime/messages.ts';
import type { SlotPlan } from '../dsp/circuit/plan.ts';
import { buildGraph, type Graph } from './graph.ts';
import { ScopeBuffer } from './scope.ts';
import takeWorkletUrl from '../../worklets/take.worklet.ts?worker&url';
import { TAKE_PROCESSOR_NAME } from '../dsp/realtime/take-messages.ts';
import { TakeRecorder, type Take } from './take.ts';
import { Planner } from './planner.ts';
import { Outbox, PendingReplies, type LoadedInfo } from './requests.ts';

export { ScopeBuffer } from './scope.ts';
export { buildGraph, loadWorklet, type Graph } from './graph.ts';

export const LIVE_INPUT_WARNING =
  'Use headphones: with speakers the guitar pickup and the microphone feed back, and a fuzz can howl loudly. Live input starts muted.';

/** Seconds of silence (nothing playing, no live input, no message) before a context made here is suspended. */
export const IDLE_SUSPEND_SECONDS = 5;

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
export interface LiveInputDevice { readonly deviceId: string; readonly label: string }
export interface LiveLatency { readonly inputSeconds: number; readonly processingSeconds: number; readonly outputSeconds: number; readonly totalSeconds: number }

export interface AudioEngineOptions {
  readonly factor?: OversamplingFactor;
  /** A native AudioContext to use (default: a new one, latencyHint 'interactive'). */
  readonly context?: AudioContext;
  /** Seconds of idleness before a context made here is suspended (default IDLE_SUSPEND_SECONDS; tests use less). */
  readonly idleSuspendSeconds?: number;
  /** Meter reports kept by the scope (default 300, 10 s at 30 Hz). */
  readonly scopeCapacity?: number;
  readonly fftSize?: number;
  /** Input calibration to start with, volts at full scale (default 0.2). */
  readonly inputVoltsAtFullScale?: number;
}

export type { LoadedInfo } from './requests.ts';
export interface SourceInfo { readonly durationSeconds: number; readonly sampleRateHz: number; readonly channels: number }
export interface LoopRegion { readonly startSeconds: number; readonly endSeconds: number }
export type CabinetSource = string | ArrayBuffer | { readonly samples: Float32Array; readonly sampleRateHz: number } | null;

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
  onReport(listener: (m: FromProcessor) => void): () => void;
  readonly latestMeter: MeterReport | null;
  levels(): { inputVolts: number; outputDbfs: number };
  spectrum(into: Float32Array): { ok: boolean; binHertz: number };
  readonly scope: ScopeBuffer;
  renderOffline(options: OfflineRenderOptions): Promise<AudioBuffer>;
  renderOfflineSamples(options: OfflineRenderOptions): Promise<Float32Array>;
  dispose(): Promise<void>;
}

/** Settings that an offline render replays, kept as the messages that made them. */
interface State {
  factor: OversamplingFactor;
  designs: Partial<Record<Slot, Design>>;
  inputVolts: number;
  outputScale: Partial<Record<Slot, number>>;
  levelDb: number;
  limiter: boolean;
  monitor: Monitor;
  /** The output mute chosen through setMuted (the processor's; the live input has its own). */
  outputMuted: boolean;
}

function stateMessages(s: State): ToProcessor[] {
  const out: ToProcessor[] = [{ type: 'set-quality', factor: s.factor }];
  for (const slot of ['A', 'B'] as const) {
    const d = s.designs[slot];
    if (d) out.push({ type: 'load-design', slot, design: d });
    const v = s.outputScale[slot];
    if (v !== undefined) out.push({ type: 'set-output-scale', slot, voltsAtFullScale: v });
  }
  out.push(
    { type: 'set-input-calibration', voltsAtFullScale: s.inputVolts },
    { type: 'set-output-level', db: s.levelDb },
    { type: 'set-limiter', enabled: s.limiter },
    { type: 'monitor', target: s.monitor },
  );
  return out;
}

/** Build an AudioBuffer at `rateHz` from mono samples at `fromHz` (resampled by an offline render if the rates differ). */
export async function monoBuffer(samples: Float32Array, fromHz: number, rateHz: number): Promise<AudioBuffer> {
  if (!(fromHz >= 3000 && fromHz <= 768000)) throw new Error(`sample rate ${fromHz} Hz is outside 3000..768000 Hz`);
  const src = new AudioBuffer({ length: Math.max(1, samples.length), sampleRate: fromHz, numberOfChannels: 1 });
  src.copyToChannel(Float32Array.from(samples), 0);
  if (fromHz === rateHz) return src;
  const len = Math.max(1, Math.round((samples.length * rateHz) / fromHz));
  const off = new OfflineAudioContext(1, len, rateHz);
  const node = new AudioBufferSourceNode(off, { buffer: src });
  node.connect(off.destination);
  node.start(0);
  return off.startRendering();
}

/**
 * Render the graph offline: the same processor, cabinet and safety stage as live.
 * `init` is the processor state at frame 0 (applied before the first block, without fades).
 */
export async function renderGraphOffline(
  init: ProcessorInit, input: Float32Array | AudioBuffer, options: { sampleRateHz?: number; tailSeconds?: number; cabinet?: AudioBuffer | null } = {},
): Promise<AudioBuffer> {
  const rate = options.sampleRateHz ?? (input instanceof AudioBuffer ? input.sampleRate : 48000);
  const buf = input instanceof AudioBuffer ? input : await monoBuffer(input, rate, rate);
  if (buf.sampleRate !== rate) throw new Error(`input buffer is at ${buf.sampleRate} Hz, render asked for ${rate} Hz`);
  const tail = options.tailSeconds ?? 0;
  if (!(tail >= 0 && tail <= 60)) throw new Error(`tailSeconds must be between 0 and 60 (got ${tail})`);
  const length = buf.length + Math.round(tail * rate);
  const ctx = new Tone.OfflineContext(new OfflineAudioContext(1, length, rate));
  const graph = await buildGraph(ctx, { ...init, meterHz: 0 });
  if (options.cabinet) graph.setCabinet(options.cabinet.sampleRate === rate ? options.cabinet : await resampleBuffer(options.cabinet, rate));
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

async function resampleBuffer(b: AudioBuffer, rateHz: number): Promise<AudioBuffer> {
  const len = Math.max(1, Math.round((b.length * rateHz) / b.sampleRate));
  const off = new OfflineAudioContext(b.numberOfChannels, len, rateHz);
  const node = new AudioBufferSourceNode(off, { buffer: b });
  node.connect(off.destination);
  node.start(0);
  return off.startRendering();
}

export async function createAudioEngine(options: AudioEngineOptions = {}): Promise<AudioEngine> {
  const raw = options.context ?? new AudioContext({ latencyHint: 'interactive' });
  // A native context given to Tone: no wrapping of the worklet source (toolchain notes).
  const ctx = new Tone.Context(raw);
  const fs = raw.sampleRate;
  const state: State = {
    factor: options.factor ?? DEFAULT_LIVE_FACTOR, designs: {}, inputVolts: options.inputVoltsAtFullScale ?? 0.2,
    outputScale: {}, levelDb: 0, limiter: true, monitor: 'A', outputMuted: false,
  };
  const graph: Graph = await buildGraph(ctx, { factor: state.factor, initial: stateMessages(state) }, options.fftSize ?? 4096);
  const scope = new ScopeBuffer(options.scopeCapacity ?? 300);
  // the take recorder listens to the live input (a realtime context only)
  let takeNode: AudioWorkletNode | null = null, recorder: TakeRecorder | null = null;
  let takeEnded: ((t: Take) => void) | null = null;
  if (raw instanceof AudioContext) {
    // on the native context: Tone loads one worklet module per context (the circuit's), and
    // this node only ever connects to native nodes (the stream source and its splitter)
    await raw.audioWorklet.addModule(takeWorkletUrl);
    takeNode = new AudioWorkletNode(raw, TAKE_PROCESSOR_NAME, { numberOfInputs: 1, numberOfOutputs: 0, channelCount: 1, channelCountMode: 'explicit' });
    recorder = new TakeRecorder(takeNode.port, fs);
    recorder.onTruncated = (t) => takeEnded?.(t);
  }
  const listeners = new Set<(m: FromProcessor) => void>();
  // Designs reach the processor as plans built off the audio thread (planner.ts); messages keep
  // their order while a plan is built (requests.ts), and replies are matched by request id.
  const planner = new Planner();
  const replies = new PendingReplies();
  const report = (m: FromProcessor): void => { for (const l of listeners) l(m); };
  const outbox = new Outbox((m) => graph.send(m));
  let latestMeter: MeterReport | null = null;
  /** The processor muted its output for safety and waits for the user (see 'safety-muted'). */
  let safetyHeld = false;
  const releaseSafety = (): void => {
    if (!safetyHeld) return;
    safetyHeld = false;
    graph.send({ type: 'set-mute', muted: state.outputMuted });
  };
  /** Oversampling filter latency of each slot's processor, base-rate samples (from 'loaded'). */
  const processingLatencySamples: Partial<Record<Slot, number>> = {};
  let peakIn = 0, peakOutDb = -200;
  graph.circuit.port.onmessage = (e: MessageEvent<FromProcessor>) => {
    const m = e.data;
    if (m.type === 'meter') {
      latestMeter = m;
      scope.push(m);
      peakIn = Math.max(peakIn, m.inputPeakVolts);
      peakOutDb = Math.max(peakOutDb, m.outputPeakDbfs);
    } else if (m.type === 'safety-muted') {
      // the processor muted its output: mute the live input here too (breaking a feedback loop).
      // The output stays muted (the circuit's tail at a level that pinned the limiter is loud)
      // until the user unmutes the live input or stops it.
      safetyHeld = true;
      if (stream) engine.setLiveMuted(true);
    } else if (m.type === 'loaded') processingLatencySamples[m.slot] = m.latencySamples;
    replies.settle(m);
    report(m);
  };
  // Idle: a context made here is suspended IDLE_SUSPEND_SECONDS after the last sound or message
  // (nothing playing, live input off), so an open workspace takes no audio-thread time while the
  // user edits; the circuit's state is frozen, not reset. Every message wakes it first: the
  // processor applies designs and values at block boundaries, and an edit then settles in the
  // background (a DC shift heard at the next play would thump).
  const managesIdle = !options.context;
  let idleTimer: ReturnType<typeof setTimeout> | null = null;
  let disposed = false;
  const busy = (): boolean => player.state === 'started' || stream !== null;
  const wake = (): void => {
    if (!managesIdle || disposed) return;
    if (idleTimer) clearTimeout(idleTimer);
    idleTimer = setTimeout(() => {
      idleTimer = null;
      if (!busy() && !disposed && raw.state === 'running') void raw.suspend().catch(() => {});
    }, (options.idleSuspendSeconds ?? IDLE_SUSPEND_SECONDS) * 1000);
    if (raw.state === 'suspended' && everStarted) void raw.resume().catch(() => {});
  };
  /** Resumed once by a user gesture (play, live input): before that a resume would be refused. */
  let everStarted = false;
  const send = (m: ToProcessor | Promise<ToProcessor | null>) => { outbox.send(m); wake(); };
  /**
   * `make(plan)` once the planner has compiled `design` at the present factor. If it cannot be
   * compiled, nothing is sent: request `id` fails and the listeners get the error as the
   * processor would have reported it.
   */
  const sendPlanned = (slot: Slot, design: Design, id: number, make: (plan: SlotPlan) => ToProcessor): void => {
    send(planner.plan(design, fs, state.factor).then(make, (e: unknown) => {
      const message = `slot ${slot}: ${e instanceof Error ? e.message : String(e)}`;
      replies.fail(id, new Error(message));
      report({ type: 'error', message, requestId: id });
      return null;
    }));
  };
  /** Plans for both slots' present designs at the present factor (a slot whose plan fails goes without: the processor reports why). */
  const withPlans = async <M extends ToProcessor>(m: M): Promise<M> => {
    const plans: { A?: SlotPlan; B?: SlotPlan } = {};
    await Promise.all((['A', 'B'] as const).map(async (slot) => {
      const d = state.designs[slot];
      if (d) try { plans[slot] = await planner.plan(d, fs, state.factor); } catch { /* reported by the processor */ }
    }));
    return { ...m, plans };
  };

  // File player.
  const player = new Tone.Player({ context: ctx, loop: false });
  player.connect(graph.input);
  player.onstop = () => wake();
  let source: AudioBuffer | null = null;
  let loop: LoopRegion | null = null;
  let startedAt = 0;
  const info = (b: AudioBuffer): SourceInfo => ({ durationSeconds: b.duration, sampleRateHz: b.sampleRate, channels: b.numberOfChannels });
  const useBuffer = (b: AudioBuffer): SourceInfo => {
    if (player.state === 'started') player.stop();
    source = b;
    player.buffer = new Tone.ToneAudioBuffer(b);
    applyLoop();
    return info(b);
  };
  const applyLoop = (): void => {
    if (!source) return;
    if (loop) {
      player.loop = true;
      player.setLoopPoints(loop.startSeconds, loop.endSeconds);
    } else player.loop = false;
  };

  // Live input.
  const liveGain = new Tone.Gain({ context: ctx, gain: 0 });
  liveGain.connect(graph.input);
  let stream: MediaStream | null = null;
  let streamNode: MediaStreamAudioSourceNode | null = null;
  let splitter: ChannelSplitterNode | null = null;
  let liveChannels = 0;
  let liveMuted = true;

  let cabinetBuffer: AudioBuffer | null = null;
  const decode = async (bytes: ArrayBuffer): Promise<AudioBuffer> => {
    try {
      return await raw.decodeAudioData(bytes.slice(0));
    } catch (e) {
      throw new Error(`could not decode the audio file (${e instanceof Error ? e.message : String(e)})`);
    }
  };

  const engine: AudioEngine = {
    context: raw,
    sampleRateHz: fs,
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
    clearSlot(slot) { delete state.designs[slot]; send({ type: 'clear-slot', slot }); },
    setPart(slot, part) {
      const d = state.designs[slot];
      const old = d?.parts.find((p) => p.id === part.id);
      const next = d ? { ...d, parts: d.parts.map((p) => (p.id === part.id ? part : p)) } : undefined;
      if (next) state.designs[slot] = next;
      const id = replies.id();
      // a new tube type is a new circuit: compiled off the audio thread, swapped in by the processor
      if (next && old?.kind === 'tube' && part.kind === 'tube' && old.type !== part.type) sendPlanned(slot, next, id, (plan) => ({ type: 'set-part', slot, part, plan, requestId: id }));
      else send({ type: 'set-part', slot, part, requestId: id });
    },
    setTubeSample(slot, tubeId, sample) {
      const d = state.designs[slot];
      if (d) state.designs[slot] = { ...d, parts: d.parts.map((p) => (p.id === tubeId && p.kind === 'tube' ? { ...p, sample } : p)) };
      send({ type: 'set-tube-sample', slot, tubeId, sample });
    },
    setMonitor(target) { state.monitor = target; send({ type: 'monitor', target }); },
    setQuality(factor) { state.factor = factor; send(withPlans({ type: 'set-quality', factor })); },
    setInputCalibration(v) { state.inputVolts = v; send({ type: 'set-input-calibration', voltsAtFullScale: v }); },
    setOutputScale(slot, v) { state.outputScale[slot] = v; send({ type: 'set-output-scale', slot, voltsAtFullScale: v }); },
    setOutputLevel(db) { state.levelDb = db; send({ type: 'set-output-level', db }); },
    setLimiter(on) { state.limiter = on; send({ type: 'set-limiter', enabled: on }); },
    setMuted(muted) {
      state.outputMuted = muted;
      send({ type: 'set-mute', muted });
      graph.output.gain.cancelScheduledValues(ctx.currentTime);
      graph.output.gain.rampTo(muted ? 0 : 1, 0.002);
    },
    reset() { send(withPlans({ type: 'reset' })); },
    get sending() { return outbox.pending; },
    async loadFile(bytes) {
      const ab = bytes instanceof ArrayBuffer ? bytes : await bytes.arrayBuffer();
      return useBuffer(await decode(ab));
    },
    setSource(samples, rateHz) {
      if (!(rateHz >= 3000 && rateHz <= 768000)) throw new Error(`sample rate ${rateHz} Hz is outside 3000..768000 Hz`);
      const b = new AudioBuffer({ length: Math.max(1, samples.length), sampleRate: rateHz, numberOfChannels: 1 });
      b.copyToChannel(Float32Array.from(samples), 0);
      return useBuffer(b);
    },
    async play() {
      if (!source) throw new Error('no audio file loaded: load one before playing');
      await raw.resume();
      everStarted = true;
      wake();
      if (player.state === 'started') player.stop();
      const offset = loop ? loop.startSeconds : 0;
      player.start(undefined, offset);
      startedAt = ctx.currentTime - offset;
    },
    stop() { if (player.state === 'started') player.stop(); wake(); },
    get idle() { return managesIdle && raw.state === 'suspended'; },
    onIdleChange(listener) {
      const h = () => listener(engine.idle);
      raw.addEventListener('statechange', h);
      return () => raw.removeEventListener('statechange', h);
    },
    get playing() { return player.state === 'started'; },
    positionSeconds() {
      if (player.state !== 'started' || !source) return 0;
      const t = ctx.currentTime - startedAt;
      if (!loop) return Math.min(t, source.duration);
      const len = loop.endSeconds - loop.startSeconds;
      return t < loop.endSeconds ? t : loop.startSeconds + ((t - loop.startSeconds) % len);
    },
    setLoop(region) {
      if (region) {
        const dur = source?.duration ?? Infinity;
        if (!(region.startSeconds >= 0 && region.endSeconds > region.startSeconds && region.endSeconds <= dur + 1e-9)) {
          throw new Error(`loop region ${region.startSeconds}..${region.endSeconds} s must lie inside the file (0..${dur} s) with start before end`);
        }
      }
      loop = region;
      applyLoop();
    },
    async startLive(options = {}) {
      if (stream) return;
      if (!navigator.mediaDevices?.getUserMedia) throw new LiveInputError('live input needs a secure page (https or localhost) with microphone support');
      const { deviceId, channel = 'mix' } = options;
      if (channel !== 'mix' && channel !== 1 && channel !== 2) throw new LiveInputError(`input channel must be 1, 2 or mix (got ${String(channel)})`);
      // two channels where the device has them (an interface's inputs 1 and 2), unprocessed
      const audio: MediaTrackConstraints = {
        echoCancellation: false, noiseSuppression: false, autoGainControl: false, channelCount: { ideal: 2 },
        ...(deviceId ? { deviceId: { exact: deviceId } } : {}),
      };
      try {
        stream = await navigator.mediaDevices.getUserMedia({ audio });
      } catch (e) {
        const name = e instanceof DOMException ? e.name : '';
        if (name === 'NotAllowedError' || name === 'SecurityError') throw new LiveInputError('microphone access was denied: allow it in the browser to use live input');
        if (name === 'NotFoundError' || name === 'OverconstrainedError') throw new LiveInputError('no audio input device found (or the chosen one is gone)');
        if (name === 'NotReadableError') throw new LiveInputError('the audio input device is busy or failed to start');
        throw new LiveInputError(`live input failed: ${e instanceof Error ? e.message : String(e)}`);
      }
      const channels = stream.getAudioTracks()[0]?.getSettings().channelCount ?? 1;
      if (channel === 2 && channels < 2) {
        for (const t of stream.getTracks()) t.stop();
        stream = null;
        throw new LiveInputError('this input has one channel: choose channel 1 (or mixed)');
      }
      await raw.resume();
      everStarted = true;
      wake();
      streamNode = raw.createMediaStreamSource(stream);
      liveChannels = channels;
      if (channel === 'mix') {
        Tone.connect(streamNode, liveGain);
        if (takeNode) streamNode.connect(takeNode);
      } else {
        // one channel of the interface on its own (a guitar on input 2 would otherwise come in
        // at half level, averaged with a silent input 1)
        splitter = raw.createChannelSplitter(2);
        streamNode.connect(splitter);
        Tone.connect(splitter, liveGain, channel - 1, 0);
        if (takeNode) splitter.connect(takeNode, channel - 1, 0);
      }
      liveMuted = true;
      liveGain.gain.value = 0;
      send({ type: 'set-live-input', live: true });
    },
    setLiveMuted(muted) {
      liveMuted = muted;
      if (!muted) releaseSafety();
      liveGain.gain.cancelScheduledValues(ctx.currentTime);
      liveGain.gain.rampTo(muted || !stream ? 0 : 1, 0.002);
    },
    stopLive() {
      releaseSafety();
      if (!stream) return;
      // a take in progress ends with the input: hand it over rather than lose it
      if (recorder?.isRecording) void recorder.stop().then((t) => takeEnded?.(t));
      liveGain.gain.value = 0;
      streamNode?.disconnect();
      splitter?.disconnect();
      for (const t of stream.getTracks()) t.stop();
      stream = null;
      streamNode = null;
      splitter = null;
      liveChannels = 0;
      liveMuted = true;
      send({ type: 'set-live-input', live: false });
    },
    get live() { return !stream ? 'off' : liveMuted ? 'muted' : 'on'; },
    get liveChannels() { return liveChannels; },
    startTake() {
      if (!recorder) throw new Error('takes are recorded from live input on a realtime context');
      if (!stream) throw new Error('start live input before recording a take');
      recorder.start();
    },
    stopTake() {
      return recorder ? recorder.stop() : Promise.resolve({ samples: new Float32Array(0), sampleRateHz: fs, droppedSamples: 0, truncated: false });
    },
    get takeSeconds() { return recorder?.isRecording ? recorder.seconds : null; },
    onTakeEnded(listener) { takeEnded = listener; },
    liveLatency() {
      if (!stream) return null;
      const settings = stream.getAudioTracks()[0]?.getSettings() as (MediaTrackSettings & { latency?: number }) | undefined;
      const input = typeof settings?.latency === 'number' && settings.latency >= 0 ? settings.latency : 0;
      const heard = state.monitor === 'dry' ? Math.max(processingLatencySamples.A ?? 0, processingLatencySamples.B ?? 0) : processingLatencySamples[state.monitor] ?? 0;
      const ac = raw as AudioContext & { outputLatency?: number };
      const output = (ac.baseLatency ?? 0) + (typeof ac.outputLatency === 'number' ? ac.outputLatency : 0);
      const processing = heard / fs;
      return { inputSeconds: input, processingSeconds: processing, outputSeconds: output, totalSeconds: input + processing + output };
    },
    async listInputs() {
      if (!navigator.mediaDevices?.enumerateDevices) return [];
      const all = await navigator.mediaDevices.enumerateDevices();
      return all.filter((d) => d.kind === 'audioinput').map((d, k) => ({ deviceId: d.deviceId, label: d.label || `audio input ${k + 1}` }));
    },
    async loadCabinet(src) {
      let b: AudioBuffer | null = null;
      if (typeof src === 'string') {
        const r = await fetch(src);
        if (!r.ok) throw new Error(`could not fetch cabinet response ${src} (HTTP ${r.status})`);
        b = await decode(await r.arrayBuffer());
      } else if (src instanceof ArrayBuffer) b = await decode(src);
      else if (src) b = await monoBuffer(src.samples, src.sampleRateHz, fs);
      if (b && b.sampleRate !== fs) b = await resampleBuffer(b, fs);
      cabinetBuffer = b;
      graph.setCabinet(b);
    },
    onReport(l) { listeners.add(l); return () => listeners.delete(l); },
    get latestMeter() { return latestMeter; },
    levels() {
      const r = { inputVolts: peakIn, outputDbfs: peakOutDb };
      peakIn = 0; peakOutDb = -200;
      return r;
    },
    spectrum(into) {
      const v = graph.analyser.getValue();
      if (!(v instanceof Float32Array)) return { ok: false, binHertz: 0 };
      into.set(v.subarray(0, Math.min(into.length, v.length)));
      return { ok: true, binHertz: fs / graph.analyser.size };
    },
    scope,
    async renderOffline(o) {
      const init: ProcessorInit = { factor: state.factor, initial: [...stateMessages(state), ...(o.overrides ?? [])] };
      return renderGraphOffline(init, o.input, {
        ...(o.sampleRateHz !== undefined ? { sampleRateHz: o.sampleRateHz } : {}),
        ...(o.tailSeconds !== undefined ? { tailSeconds: o.tailSeconds } : {}),
        cabinet: cabinetBuffer,
      });
    },
    async renderOfflineSamples(o) {
      const b = await engine.renderOffline(o);
      return b.getChannelData(0).slice();
    },
    async dispose() {
      engine.stopLive();
      disposed = true;
      if (idleTimer) clearTimeout(idleTimer);
      player.dispose();
      liveGain.dispose();
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
