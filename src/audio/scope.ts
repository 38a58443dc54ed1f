// Ring buffer of the grid / plate traces carried by the processor's meter reports (~30 Hz), kept
// per slot: every report carries both slots' traces (MeterReport.slotTraces), so slot A's scope
// stays slot A's while the listener switches A / B / dry.
import type { MeterReport, Slot } from '../dsp/realtime/messages.ts';

export const MAX_SCOPE_TUBES = 4;

const SLOT_INDEX: Readonly<Record<Slot, 0 | 1>> = { A: 0, B: 1 };

interface SlotRings {
  /** First-stage grid voltage, volts (NaN while the slot was empty). */
  readonly grid: Float32Array;
  /** Plate voltages, volts, one ring per tube (design order). */
  readonly plates: readonly Float32Array[];
}

export class ScopeBuffer {
  readonly capacity: number;
  private readonly rings: readonly [SlotRings, SlotRings];
  /** Output peak dBFS per report (of what is heard). */
  readonly outputDbfs: Float32Array;
  private write = 0;
  private count = 0;

  constructor(capacity = 300) {
    if (!(Number.isInteger(capacity) && capacity > 1)) throw new Error(`scope capacity must be an integer above 1 (got ${capacity})`);
    this.capacity = capacity;
    const rings = (): SlotRings => ({ grid: new Float32Array(capacity), plates: Array.from({ length: MAX_SCOPE_TUBES }, () => new Float32Array(capacity)) });
    this.rings = [rings(), rings()];
    this.outputDbfs = new Float32Array(capacity);
  }

  get length(): number {
    return this.count;
  }

  push(r: MeterReport): void {
    const i = this.write;
    for (let k = 0; k < 2; k++) {
      const t = r.slotTraces[k as 0 | 1],
        ring = this.rings[k as 0 | 1];
      ring.grid[i] = t ? t.gridVolts : Number.NaN;
      for (let p = 0; p < MAX_SCOPE_TUBES; p++) ring.plates[p]![i] = t ? (t.plateVolts[p] ?? 0) : Number.NaN;
    }
    this.outputDbfs[i] = r.outputPeakDbfs;
    this.write = (i + 1) % this.capacity;
    this.count = Math.min(this.capacity, this.count + 1);
  }

  clear(): void {
    this.write = 0;
    this.count = 0;
  }

  /**
   * Copy one ring oldest first into `into`: the output level ('output'), or a slot's grid trace
   * ('grid') or a tube's plate trace (its index). Returns the count.
   */
  read(which: 'output', into: Float32Array): number;
  read(which: 'grid' | number, into: Float32Array, slot: Slot): number;
  read(which: 'grid' | 'output' | number, into: Float32Array, slot: Slot = 'A'): number {
    const ring = this.rings[SLOT_INDEX[slot]];
    const src = which === 'output' ? this.outputDbfs : which === 'grid' ? ring.grid : ring.plates[which];
    if (!src) throw new Error(`scope has no trace ${String(which)}`);
    const n = Math.min(this.count, into.length);
    const start = (this.write - n + this.capacity) % this.capacity;
    for (let k = 0; k < n; k++) into[k] = src[(start + k) % this.capacity]!;
    return n;
  }
}
