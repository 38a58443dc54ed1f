// Test-only page module: puts entry points on window for tests/browser/*.test.ts and
// bench/worklet.browser.bench.ts (driven by playwright-core).
import workletUrl from '../../worklets/circuit.worklet.ts?worker&url';
import { PROCESSOR_NAME, type FromProcessor, type ProcessorInit } from '../../src/dsp/realtime/messages.ts';
import { createAudioEngine, renderGraphOffline, monoBuffer, type LiveInputOptions, type LiveLatency } from '../../src/audio/index.ts';
import { withPart, type Design } from '../../src/dsp/circuit/design.ts';
import { buildSlotPlan as buildPlan, planTransferables, withoutSentTables, type SlotPlan } from '../../src/dsp/circuit/plan.ts';
import type { ToProcessor, Slot } from '../../src/dsp/realtime/messages.ts';
import type { OversamplingFactor } from '../../src/dsp/oversampling/oversampler.ts';

/**
 * Resolves once `ready()` holds, checking every 20 ms; rejects with `what` after `timeoutMs`.
 * The tests wait on the state they need (reports arrived, context suspended, take long enough),
 * never for a fixed time, so a loaded machine makes them slower, not wrong.
 */
function until(ready: () => boolean, what: string, timeoutMs = 20_000): Promise<void> {
  return new Promise((resolve, reject) => {
    const t0 = performance.now();
    const check = () => {
      if (ready()) resolve();
      else if (performance.now() - t0 > timeoutMs) reject(new Error(`timed out waiting for ${what}`));
      else setTimeout(check, 20);
    };
    check();
  });
}
const meterCount = (reports: readonly FromProcessor[]) => reports.reduce((n, m) => n + (m.type === 'meter' ? 1 : 0), 0);

/** The worklet alone in an OfflineAudioContext: input samples in, output channel out, and the render time. */
async function renderWorklet(init: ProcessorInit, input: number[], rateHz: number): Promise<{ output: number[]; renderMs: number; messages: FromProcessor[] }> {
  const ctx = new OfflineAudioContext(1, input.length, rateHz);
  await ctx.audioWorklet.addModule(workletUrl);
  const node = new AudioWorkletNode(ctx, PROCESSOR_NAME, { numberOfInputs: 1, numberOfOutputs: 1, outputChannelCount: [1], processorOptions: init });
  const messages: FromProcessor[] = [];
  node.port.onmessage = (e: MessageEvent<FromProcessor>) => messages.push(e.data);
  const buf = new AudioBuffer({ length: input.length, sampleRate: rateHz, numberOfChannels: 1 });
  buf.copyToChannel(Float32Array.from(input), 0);
  const src = new AudioBufferSourceNode(ctx, { buffer: buf });
  src.connect(node).connect(ctx.destination);
  src.start(0);
  const t0 = performance.now();
  const out = await ctx.startRendering();
  const renderMs = performance.now() - t0;
  await new Promise((r) => setTimeout(r, 50)); // let the port deliver the last reports (the bench reads their load; no test asserts on them)
  return { output: Array.from(out.getChannelData(0)), renderMs, messages };
}

/** The whole Tone.js graph offline, with a cabinet response given as samples. */
async function renderGraph(init: ProcessorInit, input: number[], rateHz: number, ir: number[] | null): Promise<number[]> {
  const cabinet = ir ? await monoBuffer(Float32Array.from(ir), rateHz, rateHz) : null;
  const out = await renderGraphOffline(init, Float32Array.from(input), { sampleRateHz: rateHz, cabinet });
  return Array.from(out.getChannelData(0));
}

/** Live input through the real-time graph until `seconds` of meter reports (30 per second) came; returns them and the spectrum peak. */
async function liveRun(
  design: Design,
  seconds: number,
  options: LiveInputOptions = {},
): Promise<{
  reports: FromProcessor[];
  peakHz: number;
  peakDb: number;
  sampleRateHz: number;
  liveBefore: string;
  liveAfter: string;
  channels: number;
  inputs: number;
  error: string;
  latency: LiveLatency | null;
}> {
  const audio = await createAudioEngine({ inputVoltsAtFullScale: 0.5 });
  const reports: FromProcessor[] = [];
  audio.onReport((m) => reports.push(structuredClone(m)));
  await audio.loadDesign('A', design);
  try {
    await audio.startLive(options);
  } catch (e) {
    await audio.dispose();
    return {
      reports,
      peakHz: 0,
      peakDb: -Infinity,
      sampleRateHz: 0,
      liveBefore: 'off',
      liveAfter: 'off',
      channels: 0,
      inputs: 0,
      error: (e as Error).message,
      latency: null,
    };
  }
  const channels = audio.liveChannels,
    inputs = (await audio.listInputs()).length;
  const latency = audio.liveLatency();
  const liveBefore = audio.live;
  audio.setLiveMuted(false);
  const from = meterCount(reports);
  await until(() => meterCount(reports) - from >= Math.round(30 * seconds), `${seconds} s of meter reports`);
  const spec = new Float32Array(audio.context.sampleRate > 0 ? 2048 : 0);
  const s = audio.spectrum(spec);
  let best = 0;
  for (let k = 1; k < spec.length; k++) if (spec[k]! > spec[best]!) best = k;
  const liveAfter = audio.live;
  const sampleRateHz = audio.sampleRateHz;
  await audio.dispose();
  return { reports, peakHz: best * s.binHertz, peakDb: spec[best] ?? -Infinity, sampleRateHz, liveBefore, liveAfter, channels, inputs, error: '', latency };
}

/**
 * Live safety mute through the whole graph: the fake capture's tone turned up until the output
 * sits in the limiter. Returns how often the processor reported it, the live state afterwards
 * and the output peaks of the last reports (after the mute).
 */
async function liveSafety(design: Design): Promise<{ safetyMuted: number; liveAfter: string; lastPeaksDbfs: number[] }> {
  const audio = await createAudioEngine({ inputVoltsAtFullScale: 0.5 });
  const reports: FromProcessor[] = [];
  audio.onReport((m) => reports.push(structuredClone(m)));
  await audio.loadDesign('A', design);
  audio.setOutputScale('A', 1);
  audio.setOutputLevel(24);
  await audio.startLive();
  audio.setLiveMuted(false);
  await until(() => reports.some((m) => m.type === 'safety-muted'), 'the safety mute');
  const afterMute = meterCount(reports);
  await until(() => meterCount(reports) - afterMute >= 15, 'meter reports after the mute');
  const liveAfter = audio.live;
  const meters = reports.filter((m): m is Extract<FromProcessor, { type: 'meter' }> => m.type === 'meter');
  await audio.dispose();
  return { safetyMuted: reports.filter((m) => m.type === 'safety-muted').length, liveAfter, lastPeaksDbfs: meters.slice(-10).map((m) => m.outputPeakDbfs) };
}

/** Record a take of the live input (the fake capture), then return it with its statistics. */
async function takeRun(
  seconds: number,
  channel: 1 | 2 | 'mix',
): Promise<{ length: number; sampleRateHz: number; dropped: number; rms: number; peak: number; during: number | null; afterStop: number | null }> {
  const audio = await createAudioEngine({ inputVoltsAtFullScale: 0.5 });
  await audio.startLive({ channel });
  audio.startTake();
  await until(() => (audio.takeSeconds ?? 0) >= seconds, `a take of ${seconds} s`);
  const during = audio.takeSeconds;
  const t = await audio.stopTake();
  const afterStop = audio.takeSeconds;
  let ss = 0,
    peak = 0;
  // skip the first 0.1 s (the capture device starting)
  const from = Math.round(0.1 * t.sampleRateHz);
  for (let k = from; k < t.samples.length; k++) {
    ss += t.samples[k]! ** 2;
    peak = Math.max(peak, Math.abs(t.samples[k]!));
  }
  await audio.dispose();
  return {
    length: t.samples.length,
    sampleRateHz: t.sampleRateHz,
    dropped: t.droppedSamples,
    rms: Math.sqrt(ss / Math.max(1, t.samples.length - from)),
    peak,
    during,
    afterStop,
  };
}

/** Denied microphone: the error and whether the graph still works afterwards. */
async function liveDenied(): Promise<{ error: string; name: string; stillPlays: boolean }> {
  const audio = await createAudioEngine();
  let error = '',
    name = '';
  try {
    await audio.startLive();
  } catch (e) {
    error = (e as Error).message;
    name = (e as Error).name;
  }
  audio.setSource(new Float32Array(4800).fill(0.1), 48000);
  let stillPlays = true;
  try {
    await audio.play();
    audio.stop();
  } catch {
    stillPlays = false;
  }
  await audio.dispose();
  return { error, name, stillPlays };
}

/**
 * Idle suspension: play a short clip, wait past the idle time, then load a design and edit a part
 * while suspended; every step's context state, and whether meter reports came after the wake.
 */
async function idleRun(
  design: Design,
): Promise<{ states: string[]; loadedWhileIdle: boolean; reportsAfterWake: number; idleFlags: boolean[]; changes: boolean[] }> {
  const audio = await createAudioEngine({ idleSuspendSeconds: 0.4 });
  const states: string[] = [],
    idleFlags: boolean[] = [],
    changes: boolean[] = [];
  audio.onIdleChange((idle) => changes.push(idle));
  const note = () => {
    states.push(audio.context.state);
    idleFlags.push(audio.idle);
  };
  const wait = (ms: number) => new Promise((r) => setTimeout(r, ms));
  await audio.loadDesign('A', design);
  audio.setSource(
    new Float32Array(4800).map((_, k) => 0.2 * Math.sin(k / 10)),
    48000,
  );
  await audio.play();
  note(); // running while it plays
  await until(() => audio.context.state === 'suspended', 'the idle suspension');
  note(); // 0.1 s clip ended, idle time passed: suspended
  let reports = 0;
  const off = audio.onReport((m) => {
    if (m.type === 'meter') reports++;
  });
  // resolves only if the processor runs again (it answers 'loaded' from a block boundary)
  const loadedWhileIdle = await Promise.race([audio.loadDesign('B', design).then(() => true), wait(20_000).then(() => false)]);
  note();
  await until(() => reports > 3, 'meter reports after the wake');
  const reportsAfterWake = reports;
  await until(() => audio.context.state === 'suspended', 'the second idle suspension');
  note(); // asleep again
  off();
  await audio.dispose();
  return { states, loadedWhileIdle, reportsAfterWake, idleFlags, changes };
}

/**
 * Replies matched by request id through the real-time engine: slot B loaded, then slot A's load
 * sent together with a refused set-part on B (a resistor of negative value); then a tube type
 * change on A and a quality change, both compiled by the plan worker. Returns what the load
 * resolved with (or its error), every error report and the 'loaded' reports after the load.
 */
async function requestIdRun(
  a: Design,
  b: Design,
  badPartB: Design['parts'][number],
  retypedA: Design['parts'][number],
): Promise<{
  loadA: string;
  errors: { message: string; requestId: number | null }[];
  loadedAfter: { slot: string; factor: number; requestId: number | null }[];
}> {
  const audio = await createAudioEngine({ idleSuspendSeconds: 60 });
  const reports: FromProcessor[] = [];
  audio.onReport((m) => reports.push(structuredClone(m)));
  await audio.loadDesign('B', b);
  const pendingA = audio.loadDesign('A', a);
  audio.setPart('B', badPartB);
  let loadA: string;
  try {
    loadA = `resolved ${(await pendingA).slot} ${(await pendingA).designName}`;
  } catch (e) {
    loadA = `rejected: ${(e as Error).message}`;
  }
  const from = reports.length;
  audio.setPart('A', retypedA);
  audio.setQuality(2);
  // the retype may be swapped in on its own first, or together with the quality change
  const at2 = (slot: Slot) => reports.slice(from).some((m) => m.type === 'loaded' && m.slot === slot && m.factor === 2);
  await until(() => at2('A') && at2('B'), 'both slots at 2x loaded');
  await audio.dispose();
  return {
    loadA,
    errors: reports.flatMap((m) => (m.type === 'error' ? [{ message: m.message, requestId: m.requestId ?? null }] : [])),
    loadedAfter: reports.slice(from).flatMap((m) => (m.type === 'loaded' ? [{ slot: m.slot, factor: m.factor, requestId: m.requestId ?? null }] : [])),
  };
}

/**
 * A scripted editing session through the worklet in an OfflineAudioContext. Each event's
 * messages are posted at its render quantum (the context suspended there); messages that need a
 * compiled design get a plan built here first, as the workspace's plan worker does (not on the
 * audio thread, not timed). Each event quantum, and as many quiet quanta for the baseline, is
 * timed from resume to the next suspension: one quantum of processing plus the suspend/resume
 * hand-over between threads.
 */
async function editSession(
  init: ProcessorInit,
  input: number[],
  rateHz: number,
  events: { quantum: number; messages: ToProcessor[] }[],
  quiet: number[],
  window = 8,
): Promise<{ editMs: number[]; quietMs: number[]; renderMs: number; errors: string[] }> {
  const Q = 128;
  const ctx = new OfflineAudioContext(1, input.length, rateHz);
  await ctx.audioWorklet.addModule(workletUrl);
  const node = new AudioWorkletNode(ctx, PROCESSOR_NAME, { numberOfInputs: 1, numberOfOutputs: 1, outputChannelCount: [1], processorOptions: init });
  const errors: string[] = [];
  node.port.onmessage = (e: MessageEvent<FromProcessor>) => {
    if (e.data.type === 'error') errors.push(e.data.message);
  };
  const buf = new AudioBuffer({ length: input.length, sampleRate: rateHz, numberOfChannels: 1 });
  buf.copyToChannel(Float32Array.from(input), 0);
  const src = new AudioBufferSourceNode(ctx, { buffer: buf });
  src.connect(node).connect(ctx.destination);
  src.start(0);
  const designs: Partial<Record<Slot, Design>> = {};
  let factor = (init.factor ?? 4) as OversamplingFactor;
  for (const m of init.initial ?? []) if (m.type === 'load-design') designs[m.slot] = m.design;
  // as the workspace sends plans (src/audio/index.ts): each tube table once, buffers transferred
  const sent = new Set<string>();
  const buildSlotPlan = (d: Design, fs: number, f: OversamplingFactor): SlotPlan => withoutSentTables(buildPlan(d, fs, f), sent);
  const transfers = (m: ToProcessor): Transferable[] => {
    const plans = m.type === 'load-design' || m.type === 'set-part' ? [m.plan] : m.type === 'set-quality' || m.type === 'reset' ? [m.plans?.A, m.plans?.B] : [];
    return [...new Set(plans.flatMap((p) => (p ? planTransferables(p) : [])))];
  };
  const withPlan = (m: ToProcessor): ToProcessor => {
    if (m.type === 'load-design') {
      designs[m.slot] = m.design;
      return { ...m, plan: buildSlotPlan(m.design, rateHz, factor) };
    }
    if (m.type === 'set-part') {
      const d = designs[m.slot];
      if (!d) return m;
      const next = withPart(d, m.part);
      designs[m.slot] = next;
      const old = d.parts.find((p) => p.id === m.part.id);
      return old && old.kind === 'tube' && m.part.kind === 'tube' && old.type !== m.part.type ? { ...m, plan: buildSlotPlan(next, rateHz, factor) } : m;
    }
    const plans = () => ({
      ...(designs.A ? { A: buildSlotPlan(designs.A, rateHz, factor) } : {}),
      ...(designs.B ? { B: buildSlotPlan(designs.B, rateHz, factor) } : {}),
    });
    if (m.type === 'set-quality') {
      factor = m.factor;
      return { ...m, plans: plans() };
    }
    if (m.type === 'reset') return { ...m, plans: plans() };
    return m;
  };
  const editMs: number[] = [],
    quietMs: number[] = [];
  const WINDOW = window; // quanta timed after each event (warm-up, fades, swaps and glide steps land there)
  const timed = (quantum: number, into: number[], messages: ToProcessor[]) => {
    let t0 = 0;
    void ctx.suspend((quantum * Q) / rateHz).then(() => {
      for (const m of messages) {
        const p = withPlan(m);
        node.port.postMessage(p, transfers(p));
      }
      // the messages reach the processor before the next quantum (one port, in order)
      t0 = performance.now();
      void ctx.resume();
    });
    for (let j = 1; j <= WINDOW; j++) {
      void ctx.suspend(((quantum + j) * Q) / rateHz).then(() => {
        const now = performance.now();
        into.push(now - t0);
        t0 = performance.now();
        void ctx.resume();
      });
    }
  };
  for (const e of events) timed(e.quantum, editMs, e.messages);
  for (const q of quiet) timed(q, quietMs, []);
  const t = performance.now();
  await ctx.startRendering();
  const renderMs = performance.now() - t;
  return { editMs, quietMs, renderMs, errors };
}

Object.assign(window, { vw: { editSession, requestIdRun, renderWorklet, renderGraph, liveRun, liveDenied, idleRun, liveSafety, takeRun, ready: true } });
