// Meters: every report from the processor to its listeners, the latest meter report, peaks since
// the last read, the output spectrum and the per-slot scope rings.
import type { FromProcessor, MeterReport } from '../dsp/realtime/messages.ts';
import type { Graph } from './graph.ts';
import { ScopeBuffer } from './scope.ts';

export class Meters {
  readonly scope: ScopeBuffer;
  private readonly listeners = new Set<(m: FromProcessor) => void>();
  private latest: MeterReport | null = null;
  private peakIn = 0;
  private peakOutDb = -200;

  constructor(
    private readonly graph: Graph,
    scopeCapacity: number,
  ) {
    this.scope = new ScopeBuffer(scopeCapacity);
  }

  /** A report from the processor (or one of ours in its form): meters updated, listeners told. */
  receive(m: FromProcessor): void {
    if (m.type === 'meter') {
      this.latest = m;
      this.scope.push(m);
      this.peakIn = Math.max(this.peakIn, m.inputPeakVolts);
      this.peakOutDb = Math.max(this.peakOutDb, m.outputPeakDbfs);
    }
    for (const l of this.listeners) l(m);
  }

  onReport(l: (m: FromProcessor) => void): () => void {
    this.listeners.add(l);
    return () => this.listeners.delete(l);
  }

  get latestMeter(): MeterReport | null {
    return this.latest;
  }

  /** Peaks since the last call (`inputVolts` at least `otherInputVolts`: a meter of the live input's own). */
  levels(otherInputVolts = 0): { inputVolts: number; outputDbfs: number } {
    const r = { inputVolts: Math.max(this.peakIn, otherInputVolts), outputDbfs: this.peakOutDb };
    this.peakIn = 0;
    this.peakOutDb = -200;
    return r;
  }

  /** dB per bin of the output (fftSize / 2 bins). */
  spectrum(into: Float32Array, rateHz: number): { ok: boolean; binHertz: number } {
    const v = this.graph.analyser.getValue();
    if (!(v instanceof Float32Array)) return { ok: false, binHertz: 0 };
    into.set(v.subarray(0, Math.min(into.length, v.length)));
    return { ok: true, binHertz: rateHz / this.graph.analyser.size };
  }
}
