// The fallback audio back end: each slot's design renders the whole clip in a worker; the
// three renders (A, B, dry) play in sync from buffers and switching is a short crossfade.
// Live input is heard dry until the real-time processor is available.
import type { Design } from '../dsp/circuit/design.ts';
import type { Monitor, Slot } from '../dsp/realtime/messages.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';
import type { AudioPort, AudioStatus, LoopRegion, ScopeTrace, SourceClip } from './audio-port.ts';
import type { RenderDone, RenderReply, RenderRequest } from './render-protocol.ts';
import { offsetDb } from './model/meters.ts';

type Target = Slot | 'dry';
const TARGETS: readonly Target[] = ['A', 'B', 'dry'];
const FADE_SECONDS = 0.008;

export class LocalAudio implements AudioPort {
  readonly engineName = 'clip renderer (worker)';
  private ctx: AudioContext | null = null;
  private worker: Worker | null = null;
  private designs: Partial<Record<Slot, Design>> = {};
  private done: Partial<Record<Slot, RenderDone>> = {};
  private pending: Partial<Record<Slot, number>> = {};
  private timers: Partial<Record<Slot, ReturnType<typeof setTimeout>>> = {};
  private nextId = 1;
  private clip: SourceClip | null = null;
  private calibration = 0.2;
  private factor: OversamplingFactor = 2;
  private monitor: Monitor = 'A';
  private matched = true;
  private loop: LoopRegion | null = null;
  private listeners = new Set<(s: AudioStatus) => void>();
  private status: AudioStatus = { engine: this.engineName, playing: false, rendering: false, durationSeconds: 0, loadFraction: null, offsetDb: null, live: 'off', message: null };
  private sources: AudioBufferSourceNode[] = [];
  private gains: Partial<Record<Target, GainNode>> = {};
  private mix: GainNode | null = null;
  private cabinet: ConvolverNode | null = null;
  private analyser: AnalyserNode | null = null;
  private inputAnalyser: AnalyserNode | null = null;
  private startedAt = 0;
  private startOffset = 0;
  private liveStream: MediaStream | null = null;
  private liveNode: MediaStreamAudioSourceNode | null = null;
  private liveGain: GainNode | null = null;
  private scratch = new Float32Array(2048);

  private context(): AudioContext {
    if (!this.ctx) {
      this.ctx = new AudioContext({ latencyHint: 'interactive' });
      this.mix = this.ctx.createGain();
      // gentle safety limit on everything heard
      const limiter = this.ctx.createDynamicsCompressor();
      limiter.threshold.value = -3; limiter.knee.value = 0; limiter.ratio.value = 20; limiter.attack.value = 0.001; limiter.release.value = 0.1;
      this.analyser = this.ctx.createAnalyser();
      this.analyser.fftSize = 4096;
      this.analyser.smoothingTimeConstant = 0.6;
      this.inputAnalyser = this.ctx.createAnalyser();
      this.inputAnalyser.fftSize = 2048;
      this.mix.connect(limiter).connect(this.analyser).connect(this.ctx.destination);
      for (const t of TARGETS) {
        const g = this.ctx.createGain();
        g.gain.value = t === this.monitor ? 1 : 0;
        g.connect(this.mix);
        this.gains[t] = g;
      }
    }
    return this.ctx;
  }

  private getWorker(): Worker {
    if (!this.worker) {
      this.worker = new Worker(new URL('./render.worker.ts', import.meta.url), { type: 'module' });
      this.worker.onmessage = (ev: MessageEvent<RenderReply>) => this.onReply(ev.data);
    }
    return this.worker;
  }

  private emit(patch: Partial<AudioStatus>): void {
    this.status = { ...this.status, ...patch };
    for (const l of this.listeners) l(this.status);
  }

  subscribe(listener: (s: AudioStatus) => void): () => void {
    this.listeners.add(listener);
    listener(this.status);
    return () => this.listeners.delete(listener);
  }

  setDesign(slot: Slot, design: Design): void {
    if (this.designs[slot] === design) return;
    this.designs[slot] = design;
    this.schedule(slot, 120);
  }

  private schedule(slot: Slot, delayMs: number): void {
    const t = this.timers[slot];
    if (t) clearTimeout(t);
    this.timers[slot] = setTimeout(() => this.requestRender(slot), delayMs);
  }

  private requestRender(slot: Slot): void {
    const design = this.designs[slot];
    if (!design || !this.clip) return;
    const id = this.nextId++;
    this.pending[slot] = id;
    const req: RenderRequest = {
      type: 'render', id, design, input: this.clip.samples.slice(), sampleRateHz: this.clip.sampleRateHz,
      inputVoltsAtFullScale: this.calibration, factor: this.factor, probes: probeNodes(design), probeRateHz: 2000,
    };
    this.emit({ rendering: true });
    this.getWorker().postMessage(req, [req.input.buffer]);
  }

  private onReply(r: RenderReply): void {
    const slot = (['A', 'B'] as const).find((s) => this.pending[s] === r.id);
    if (!slot) return;
    delete this.pending[slot];
    const busy = this.pending.A !== undefined || this.pending.B !== undefined;
    if (r.type === 'failed') { this.emit({ rendering: busy, message: `slot ${slot}: ${r.reason}` }); return; }
    this.done[slot] = r;
    const a = this.done.A, b = this.done.B;
    this.emit({ rendering: busy, loadFraction: r.loadFraction * 1, offsetDb: a && b ? offsetDb(a.outputVoltsAtFullScale, b.outputVoltsAtFullScale) : null, message: null });
    if (this.status.playing) this.restartAt(this.positionSeconds());
  }

  setMonitor(target: Monitor): void {
    this.monitor = target;
    const ctx = this.ctx;
    if (!ctx) return;
    const now = ctx.currentTime;
    for (const t of TARGETS) {
      const g = this.gains[t]!.gain;
      g.cancelScheduledValues(now);
      g.setValueAtTime(g.value, now);
      g.linearRampToValueAtTime(t === target ? 1 : 0, now + FADE_SECONDS);
    }
  }

  setLoudnessMatch(on: boolean): void {
    this.matched = on;
    if (this.status.playing) this.restartAt(this.positionSeconds());
  }

  setInputCalibration(voltsAtFullScale: number): void {
    if (this.calibration === voltsAtFullScale) return;
    this.calibration = voltsAtFullScale;
    this.schedule('A', 200); this.schedule('B', 200);
  }

  setQuality(factor: OversamplingFactor): void {
    if (this.factor === factor) return;
    this.factor = factor;
    this.schedule('A', 50); this.schedule('B', 50);
  }

  setSource(clip: SourceClip): void {
    const wasPlaying = this.status.playing;
    this.stop();
    this.clip = clip;
    this.done = {};
    this.emit({ durationSeconds: clip.samples.length / clip.sampleRateHz, offsetDb: null });
    this.schedule('A', 0); this.schedule('B', 0);
    if (wasPlaying) void this.play();
  }

  setLoop(region: LoopRegion | null): void {
    this.loop = region;
    if (this.status.playing) this.restartAt(region ? region.startSeconds : this.positionSeconds());
  }

  setCabinet(ir: Float32Array | null, sampleRateHz: number): void {
    const ctx = this.context();
    if (this.cabinet) { this.cabinet.disconnect(); this.cabinet = null; }
    this.mix!.disconnect();
    const limiterIn = this.analyser!; // rebuild: mix -> [cabinet] -> analyser path via a fresh limiter
    const limiter = ctx.createDynamicsCompressor();
    limiter.threshold.value = -3; limiter.ratio.value = 20; limiter.attack.value = 0.001; limiter.release.value = 0.1;
    limiter.connect(limiterIn);
    if (ir) {
      const c = ctx.createConvolver();
      c.normalize = false;
      const buf = ctx.createBuffer(1, ir.length, sampleRateHz);
      buf.copyToChannel(ir as Float32Array<ArrayBuffer>, 0);
      c.buffer = buf;
      this.mix!.connect(c).connect(limiter);
      this.cabinet = c;
    } else {
      this.mix!.connect(limiter);
    }
  }

  async decode(bytes: ArrayBuffer, name: string): Promise<SourceClip> {
    const ctx = this.context();
    const buf = await ctx.decodeAudioData(bytes);
    const mono = new Float32Array(buf.length);
    for (let c = 0; c < buf.numberOfChannels; c++) {
      const ch = buf.getChannelData(c);
      for (let i = 0; i < mono.length; i++) mono[i]! += ch[i]! / buf.numberOfChannels;
    }
    return { name, samples: mono, sampleRateHz: buf.sampleRate };
  }

  async play(): Promise<void> {
    const ctx = this.context();
    if (ctx.state !== 'running') await ctx.resume();
    if (!this.clip) return;
    this.restartAt(this.loop ? this.loop.startSeconds : 0);
  }

  private buffer(target: Target): AudioBuffer | null {
    const ctx = this.ctx!;
    const clip = this.clip!;
    let data: Float32Array;
    if (target === 'dry') data = clip.samples;
    else {
      const r = this.done[target];
      if (!r) return null;
      data = r.output;
      // unmatched: both slots use A's output scaling so their real level difference is heard
      const a = this.done.A;
      if (!this.matched && target === 'B' && a) {
        const k = r.outputVoltsAtFullScale / a.outputVoltsAtFullScale;
        data = data.map((x) => Math.max(-4, Math.min(4, x * k)));
      }
    }
    const b = ctx.createBuffer(1, data.length, clip.sampleRateHz);
    b.copyToChannel(data as Float32Array<ArrayBuffer>, 0);
    return b;
  }

  private restartAt(offsetSeconds: number): void {
    const ctx = this.ctx;
    if (!ctx || !this.clip) return;
    for (const s of this.sources) { s.onended = null; try { s.stop(); } catch { /* not started */ } s.disconnect(); }
    this.sources = [];
    const dur = this.clip.samples.length / this.clip.sampleRateHz;
    const off = Math.min(Math.max(0, offsetSeconds), Math.max(0, dur - 0.01));
    const when = ctx.currentTime + 0.02;
    for (const t of TARGETS) {
      const buf = this.buffer(t);
      if (!buf) continue;
      const s = ctx.createBufferSource();
      s.buffer = buf;
      if (this.loop) { s.loop = true; s.loopStart = this.loop.startSeconds; s.loopEnd = this.loop.endSeconds; }
      s.connect(this.gains[t]!);
      if (t === 'dry') s.connect(this.inputAnalyser!);
      s.start(when, off);
      if (t === 'dry' && !this.loop) s.onended = () => this.emit({ playing: false });
      this.sources.push(s);
    }
    this.startedAt = when;
    this.startOffset = off;
    this.emit({ playing: true });
  }

  stop(): void {
    for (const s of this.sources) { s.onended = null; try { s.stop(); } catch { /* not started */ } s.disconnect(); }
    this.sources = [];
    if (this.status.playing) this.emit({ playing: false });
  }

  positionSeconds(): number {
    if (!this.ctx || !this.status.playing || !this.clip) return 0;
    const t = this.startOffset + Math.max(0, this.ctx.currentTime - this.startedAt);
    if (this.loop) {
      const { startSeconds: a, endSeconds: b } = this.loop;
      return t < b ? t : a + ((t - a) % Math.max(1e-3, b - a));
    }
    return Math.min(t, this.status.durationSeconds);
  }

  async startLive(): Promise<void> {
    const ctx = this.context();
    if (ctx.state !== 'running') await ctx.resume();
    this.stop();
    this.liveStream = await navigator.mediaDevices.getUserMedia({ audio: { echoCancellation: false, noiseSuppression: false, autoGainControl: false } });
    this.liveNode = ctx.createMediaStreamSource(this.liveStream);
    this.liveGain = ctx.createGain();
    this.liveGain.gain.value = 0; // starts muted
    this.liveNode.connect(this.inputAnalyser!);
    this.liveNode.connect(this.liveGain).connect(this.gains.dry!);
    this.emit({ live: 'muted', message: 'live input is heard dry: the real-time circuit processor is not loaded in this build' });
  }

  stopLive(): void {
    this.liveNode?.disconnect();
    this.liveGain?.disconnect();
    for (const t of this.liveStream?.getTracks() ?? []) t.stop();
    this.liveStream = null; this.liveNode = null; this.liveGain = null;
    this.emit({ live: 'off', message: null });
  }

  setMuted(muted: boolean): void {
    if (!this.liveGain || !this.ctx) return;
    this.liveGain.gain.setTargetAtTime(muted ? 0 : 1, this.ctx.currentTime, 0.005);
    this.emit({ live: muted ? 'muted' : 'on' });
  }

  levels(): { inputVolts: number; outputDbfs: number } {
    const peak = (a: AnalyserNode | null) => {
      if (!a) return 0;
      const buf = this.scratch.length === a.fftSize ? this.scratch : (this.scratch = new Float32Array(a.fftSize));
      a.getFloatTimeDomainData(buf);
      let p = 0;
      for (let i = 0; i < buf.length; i++) p = Math.max(p, Math.abs(buf[i]!));
      return p;
    };
    const inPeak = peak(this.inputAnalyser);
    const outPeak = peak(this.analyser);
    return { inputVolts: inPeak * this.calibration, outputDbfs: outPeak > 0 ? 20 * Math.log10(outPeak) : -120 };
  }

  spectrum(into: Float32Array): { ok: boolean; binHertz: number } {
    const a = this.analyser;
    if (!a || !this.ctx) return { ok: false, binHertz: 0 };
    a.getFloatFrequencyData(into as Float32Array<ArrayBuffer>);
    return { ok: true, binHertz: this.ctx.sampleRate / a.fftSize };
  }

  scope(slot: Slot): ScopeTrace | null {
    const r = this.done[slot];
    const d = this.designs[slot];
    if (!r || !d) return null;
    return { names: probeNodes(d), traces: r.probes, rateHz: r.probeRateHz, rolling: false };
  }

  async renderOffline(slot: Slot | 'dry', seconds: number): Promise<Float32Array | null> {
    if (!this.clip) return null;
    const n = Math.round(seconds * this.clip.sampleRateHz);
    if (slot === 'dry') return this.clip.samples.slice(0, n);
    for (let i = 0; i < 600 && (this.pending[slot] !== undefined || this.timers[slot] !== undefined && !this.done[slot]); i++) await new Promise((r) => setTimeout(r, 50));
    return this.done[slot]?.output.slice(0, n) ?? null;
  }
}

/** Nodes the scope records: every tube's grid and plate, first stage first. */
export function probeNodes(d: Design): string[] {
  const out: string[] = [];
  for (const p of d.parts) if (p.kind === 'tube') for (const n of [p.nodes.grid, p.nodes.plate]) if (!out.includes(n) && n !== '0') out.push(n);
  return out;
}
