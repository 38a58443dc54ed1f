// Ring buffer of the grid / plate traces carried by the processor's meter reports (~30 Hz).
import type { MeterReport } from '../dsp/realtime/messages.ts';

export const MAX_SCOPE_TUBES = 4;

export class ScopeBuffer {
  readonly capacity: number;
  /** First-stage grid voltage, volts. */
  readonly grid: Float32Array;
  /** Plate voltages, volts, one ring per tube (design order). */
  readonly plates: readonly Float32Array[];
  /** Output peak dBFS per report. */
  readonly outputDbfs: Float32Array;
  private write = 0;
  private count = 0;

  constructor(capacity = 300) {
    if (!(Number.isInteger(capacity) && capacity > 1)) throw new Error(`scope capacity must be an integer above 1 (got ${capacity})`);
    this.capacity = capacity;
    this.grid = new Float32Array(capacity);
    this.plates = Array.from({ length: MAX_SCOPE_TUBES }, () => new Float32Array(capacity));
    this.outputDbfs = new Float32Array(capacity);
  }

  get length(): number { return this.count; }

  push(r: MeterReport): void {
    const i = this.write;
    this.grid[i] = r.gridVolts;
    for (let t = 0; t < MAX_SCOPE_TUBES; t++) this.plates[t]![i] = r.plateVolts[t] ?? 0;
    this.outputDbfs[i] = r.outputPeakDbfs;
    this.write = (i + 1) % this.capacity;
    this.count = Math.min(this.capacity, this.count + 1);
  }

  clear(): void { this.write = 0; this.count = 0; }

  /** Copy one ring ('grid', 'output' or a tube index) oldest first into `into`; returns the count. */
  read(which: 'grid' | 'output' | number, into: Float32Array): number {
    const src = which === 'grid' ? this.grid : which === 'output' ? this.outputDbfs : this.plates[which];
    if (!src) throw new Error(`scope has no trace ${String(which)}`);
    const n = Math.min(this.count, into.length);
    const start = (this.write - n + this.capacity) % this.capacity;
    for (let k = 0; k < n; k++) into[k] = src[(start + k) % this.capacity]!;
    return n;
  }
}
