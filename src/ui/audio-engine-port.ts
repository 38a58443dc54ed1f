// AudioPort over the real-time engine of src/audio (Tone.js graph around the circuit worklet).
// The engine is created on the first call that needs sound (a user gesture); settings made
// before that are kept and applied then.
import { designCircuit, withVolumeFull, type Design, type Part } from '../dsp/circuit/design.ts';
import { estimateOutputVoltsAtFullScale } from '../dsp/render/levelling.ts';
import type { Monitor, Slot, ToProcessor } from '../dsp/realtime/messages.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';
import { AudioSettings, createAudioEngine, type AudioEngine, type LiveInputDevice, type LiveInputOptions, type LiveLatency } from '../audio/index.ts';
import type { Take } from '../audio/take.ts';
import type { AudioPort, AudioStatus, LoopRegion, ScopeTrace, SourceClip } from './audio-port.ts';
import { OverloadGuard, overloadMessage } from '../audio/overload-guard.ts';

const SLOTS: readonly Slot[] = ['A', 'B'];

/** True when only part values / tube samples differ (same parts, nodes, types and supply). */
export function sameStructure(a: Design, b: Design): boolean {
  if (
    a.parts.length !== b.parts.length ||
    JSON.stringify(a.supply) !== JSON.stringify(b.supply) ||
    JSON.stringify(a.input) !== JSON.stringify(b.input) ||
    JSON.stringify(a.output) !== JSON.stringify(b.output)
  )
    return false;
  return a.parts.every((p, i) => {
    const q = b.parts[i]!;
    if (p.id !== q.id || p.kind !== q.kind || JSON.stringify(p.nodes) !== JSON.stringify(q.nodes)) return false;
    if (p.kind === 'tube' && q.kind === 'tube') return p.type === q.type && (p.interelectrode !== false) === (q.interelectrode !== false);
    if (p.kind === 'switch' && q.kind === 'switch') return p.closed === q.closed;
    return true;
  });
}

export class EnginePort implements AudioPort {
  readonly engineName = 'real-time circuit worklet';
  private engine: AudioEngine | null = null;
  private creating: Promise<AudioEngine> | null = null;
  /** What the workspace asked for; what was sent (and the rest of the audio settings) lives in `settings`. */
  private designs: Partial<Record<Slot, Design>> = {};
  /** The audio settings, held once: the engine sends from and writes to this object. */
  private readonly settings = Object.assign(new AudioSettings(), { loudnessMatch: true });
  /**
   * Each slot's output scale: its design with the volume fully clockwise (so the knob is heard),
   * levelled at 1 kHz. The live match then measures and takes out what is left between them.
   */
  private scales: Partial<Record<Slot, number>> = {};
  private clip: SourceClip | null = null;
  private loop: LoopRegion | null = null;
  private cabinet: { samples: Float32Array; sampleRateHz: number } | null = null;
  private listeners = new Set<(s: AudioStatus) => void>();
  private status: AudioStatus = {
    engine: this.engineName,
    playing: false,
    rendering: false,
    durationSeconds: 0,
    loadFraction: null,
    offsetDb: null,
    matchGainDb: 0,
    outputLufs: null,
    live: 'off',
    message: null,
    qualityFactor: this.settings.factor,
    qualityNote: null,
    liveChannels: 0,
    idle: false,
    safetyNote: null,
  };
  private readonly guard = new OverloadGuard(this.settings.factor);
  private levelTimer: ReturnType<typeof setTimeout> | null = null;
  private sendsInFlight = 0;
  private lastStatusMs = 0;
  private grid = new Float32Array(300);
  private decoder: OfflineAudioContext | null = null;

  private emit(patch: Partial<AudioStatus>): void {
    this.status = { ...this.status, ...patch };
    for (const l of this.listeners) l(this.status);
  }

  subscribe(listener: (s: AudioStatus) => void): () => void {
    this.listeners.add(listener);
    listener(this.status);
    return () => this.listeners.delete(listener);
  }

  /** Create the engine (needs a user gesture for sound to start). */
  private ensure(): Promise<AudioEngine> {
    if (this.engine) return Promise.resolve(this.engine);
    if (!this.creating) {
      // the engine starts from the settings (factor, calibration, monitor) and keeps them
      this.creating = createAudioEngine({ settings: this.settings })
        .then(async (e) => {
          this.engine = e;
          // the engine suspends its context when idle: show it (and the load as unknown)
          e.onIdleChange((idle) => {
            if (idle !== this.status.idle) this.emit(idle ? { idle: true, loadFraction: null } : { idle: false });
          });
          e.onReport((m) => {
            if (m.type === 'error') this.emit({ message: m.message });
            else if (m.type === 'recovered') this.emit({ message: `slot ${m.slot} recovered: ${m.reason}` });
            else if (m.type === 'safety-muted')
              this.emit({
                live: e.live,
                safetyNote: `Live input muted for safety: ${m.reason}. Use headphones or turn the speakers away, lower the output level, then unmute.`,
              });
            else if (m.type === 'meter') {
              const now = performance.now();
              this.observeLoad(m.loadFraction, now);
              if (now - this.lastStatusMs > 500) {
                this.lastStatusMs = now;
                this.emit({
                  loadFraction: m.loadFraction,
                  playing: e.playing,
                  offsetDb: m.matchOffsetDb ?? null,
                  matchGainDb: m.matchGainDb ?? 0,
                  outputLufs: m.outputLufs ?? null,
                });
              }
            }
          });
          for (const s of SLOTS) await this.sendDesign(s);
          if (this.clip) e.setSource(this.clip.samples, this.clip.sampleRateHz);
          e.setLoop(this.loop);
          if (this.cabinet) await e.loadCabinet(this.cabinet);
          return e;
        })
        .catch((err: unknown) => {
          this.creating = null;
          this.emit({ message: `audio engine could not start: ${(err as Error).message}` });
          throw err;
        });
    }
    return this.creating;
  }

  private async sendDesign(slot: Slot): Promise<void> {
    const e = this.engine,
      d = this.designs[slot];
    if (!e || !d) return;
    const prev = this.settings.designs[slot];
    if (prev && prev !== d && sameStructure(prev, d)) {
      d.parts.forEach((p, i) => {
        const q = prev.parts[i]!;
        if (p === q || JSON.stringify(p) === JSON.stringify(q)) return;
        if (p.kind === 'tube' && q.kind === 'tube' && p.type === q.type) e.setTubeSample(slot, p.id, p.sample);
        else e.setPart(slot, p as Part);
      });
    } else if (prev !== d) {
      await e.loadDesign(slot, d, { outputVoltsAtFullScale: this.outputScale(slot) });
    }
  }

  private outputScale(slot: Slot): number {
    return (
      this.scales[slot] ??
      (this.scales[slot] = estimateOutputVoltsAtFullScale(designCircuit(withVolumeFull(this.designs[slot]!)), 48000, this.settings.inputVolts))
    );
  }

  /** Re-estimate both slots' output scales a little after edits (the live match follows the sound itself). */
  private releveling(): void {
    if (this.levelTimer) clearTimeout(this.levelTimer);
    this.levelTimer = setTimeout(() => {
      this.levelTimer = null;
      this.scales = {};
      if (this.engine) for (const s of SLOTS) if (this.designs[s]) this.engine.setOutputScale(s, this.outputScale(s));
    }, 250);
  }

  setDesign(slot: Slot, design: Design): void {
    if (this.designs[slot] === design) return;
    this.designs[slot] = design;
    this.sendsInFlight++;
    void this.sendDesign(slot)
      .catch((err: unknown) => this.emit({ message: `slot ${slot}: ${(err as Error).message}` }))
      .finally(() => {
        this.sendsInFlight--;
      });
    this.releveling();
  }

  setMonitor(target: Monitor): void {
    this.settings.monitor = target;
    this.engine?.setMonitor(target);
  }
  setLoudnessMatch(on: boolean): void {
    this.settings.loudnessMatch = on;
    this.engine?.setLoudnessMatch(on);
  }
  setInputCalibration(v: number): void {
    if (this.settings.inputVolts === v) return;
    this.settings.inputVolts = v;
    this.engine?.setInputCalibration(v);
    this.releveling();
  }
  setQuality(f: OversamplingFactor): void {
    this.settings.factor = f;
    this.guard.setFactor(f);
    this.engine?.setQuality(f);
    if (this.status.qualityFactor !== f || this.status.qualityNote !== null) this.emit({ qualityFactor: f, qualityNote: null });
  }
  /**
   * One processor load report (the meter handler calls this for every report): the overload
   * guard may step the live quality down, which the workspace follows through qualityNote.
   */
  observeLoad(loadFraction: number, nowMs: number): void {
    const step = this.guard.observe(loadFraction, nowMs);
    if (!step) return;
    this.settings.factor = step.to;
    this.engine?.setQuality(step.to);
    this.emit({ qualityFactor: step.to, qualityNote: overloadMessage(step) });
  }
  setOverloadGuard(on: boolean): void {
    this.guard.enabled = on;
    this.guard.setFactor(this.settings.factor);
  }
  overloadGuardOn(): boolean {
    return this.guard.enabled;
  }
  /** The live quality the port holds now (the workspace's selector follows it). */
  qualityFactor(): OversamplingFactor {
    return this.settings.factor;
  }
  /** The design the port holds for a slot (what the engine plays once settled). */
  design(slot: Slot): Design | undefined {
    return this.designs[slot];
  }
  /** No design send in flight and no re-levelling pending: what plays is what the workspace shows. */
  settled(): boolean {
    return this.sendsInFlight === 0 && this.levelTimer === null && (this.engine?.sending ?? 0) === 0;
  }

  setSource(clip: SourceClip): void {
    this.clip = clip;
    this.emit({ durationSeconds: clip.samples.length / clip.sampleRateHz });
    this.engine?.setSource(clip.samples, clip.sampleRateHz);
  }

  setLoop(region: LoopRegion | null): void {
    this.loop = region;
    this.engine?.setLoop(region);
  }

  setCabinet(ir: Float32Array | null, sampleRateHz: number): void {
    this.cabinet = ir ? { samples: ir, sampleRateHz } : null;
    void this.engine?.loadCabinet(this.cabinet);
  }

  async decode(bytes: ArrayBuffer, name: string): Promise<SourceClip> {
    // An offline context decodes without a user gesture (resampled to 48 kHz).
    this.decoder ??= new OfflineAudioContext(1, 1, 48000);
    const buf = await this.decoder.decodeAudioData(bytes.slice(0));
    const mono = new Float32Array(buf.length);
    for (let c = 0; c < buf.numberOfChannels; c++) {
      const ch = buf.getChannelData(c);
      for (let i = 0; i < mono.length; i++) mono[i]! += ch[i]! / buf.numberOfChannels;
    }
    return { name, samples: mono, sampleRateHz: buf.sampleRate };
  }

  async play(): Promise<void> {
    const e = await this.ensure();
    if (e.context.state !== 'running') await e.context.resume();
    await e.play();
    this.emit({ playing: true });
    const poll = () => {
      if (this.engine?.playing) setTimeout(poll, 250);
      else this.emit({ playing: false });
    };
    setTimeout(poll, 250);
  }

  stop(): void {
    this.engine?.stop();
    this.emit({ playing: false });
  }
  positionSeconds(): number {
    return this.engine?.playing ? this.engine.positionSeconds() : 0;
  }

  async startLive(options?: LiveInputOptions): Promise<void> {
    const e = await this.ensure();
    if (e.context.state !== 'running') await e.context.resume();
    // a new device or channel: stop the running input first; the new one starts muted
    if (e.live !== 'off') e.stopLive();
    try {
      await e.startLive(options);
    } finally {
      this.emit({ live: e.live, liveChannels: e.liveChannels });
    }
  }
  liveLatency(): LiveLatency | null {
    return this.engine?.liveLatency() ?? null;
  }
  private takeCount = 0;
  private takeListener: ((clip: SourceClip | null) => void) | null = null;
  /** A take as a clip, named by its order and time of day. */
  private takeClip(t: Take): SourceClip | null {
    if (t.samples.length === 0) return null;
    this.takeCount++;
    const now = new Date();
    const hhmm = `${String(now.getHours()).padStart(2, '0')}:${String(now.getMinutes()).padStart(2, '0')}`;
    return { name: `live take ${this.takeCount} (${hhmm})`, samples: t.samples, sampleRateHz: t.sampleRateHz };
  }
  startTake(): void {
    const e = this.engine;
    if (!e) throw new Error('start live input before recording a take');
    e.onTakeEnded((t) => this.takeListener?.(this.takeClip(t)));
    e.startTake();
  }
  async stopTake(): Promise<SourceClip | null> {
    return this.engine ? this.takeClip(await this.engine.stopTake()) : null;
  }
  takeSeconds(): number | null {
    return this.engine?.takeSeconds ?? null;
  }
  onTakeEnded(listener: (clip: SourceClip | null) => void): void {
    this.takeListener = listener;
  }
  listInputs(): Promise<LiveInputDevice[]> {
    return this.engine ? this.engine.listInputs() : Promise.resolve([]);
  }
  stopLive(): void {
    this.engine?.stopLive();
    this.emit({ live: 'off', liveChannels: 0 });
  }
  setMuted(muted: boolean): void {
    const e = this.engine;
    if (!e || e.live === 'off') return;
    e.setLiveMuted(muted);
    this.emit({ live: e.live, ...(muted ? {} : { safetyNote: null }) });
  }

  levels(): { inputVolts: number; outputDbfs: number } {
    return this.engine?.levels() ?? { inputVolts: 0, outputDbfs: -120 };
  }
  spectrum(into: Float32Array): { ok: boolean; binHertz: number } {
    return this.engine && this.engine.playing ? this.engine.spectrum(into) : { ok: false, binHertz: 0 };
  }

  scope(slot: Slot): ScopeTrace | null {
    const e = this.engine,
      d = this.designs[slot];
    if (!e || !d || e.scope.length < 2) return null;
    const tubes = d.parts.filter((p) => p.kind === 'tube');
    const firstGrid = tubes[0]?.kind === 'tube' ? tubes[0].nodes.grid : 'grid';
    const names = [firstGrid, ...tubes.map((t) => (t.kind === 'tube' ? t.nodes.plate : ''))];
    const cap = e.scope.capacity;
    if (this.grid.length !== cap) this.grid = new Float32Array(cap);
    const traces: Float32Array[] = [];
    const n = e.scope.read('grid', this.grid, slot);
    traces.push(this.grid.slice(0, n));
    tubes.forEach((_, i) => {
      const b = new Float32Array(cap);
      const m = e.scope.read(i, b, slot);
      traces.push(b.slice(0, m));
    });
    return { names, traces, rateHz: 30, rolling: true };
  }

  async renderOffline(slot: Slot | 'dry', seconds: number): Promise<Float32Array | null> {
    if (!this.clip) return null;
    const e = await this.ensure();
    const n = Math.min(this.clip.samples.length, Math.round(seconds * this.clip.sampleRateHz));
    const overrides: ToProcessor[] = [{ type: 'monitor', target: slot }];
    return e.renderOfflineSamples({ input: this.clip.samples.slice(0, n), sampleRateHz: this.clip.sampleRateHz, overrides });
  }
}
