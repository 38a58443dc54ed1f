// The floor that the tube laws alone put under the processor's load. Each template is run at
// each oversampling factor on the dual-slot benchmark's input (a 196 Hz sine, 0.35 V peak at
// the circuit input) while every device evaluation is counted and its port voltages recorded;
// the recorded voltages are then replayed through fresh devices in a timing loop. The product
// evaluations per second x time per evaluation is the share of one core that the laws take
// before any Newton step, linear map, oversampling or metering is done. Prints JSON.
// Run: npx tsx bench/laws.bench.ts (as shipped: an esbuild bundle of this file, see below)
//   npx esbuild bench/laws.bench.ts --bundle --platform=node --format=esm --outfile=/tmp/laws.mjs && node /tmp/laws.mjs
import { CircuitEngine } from '../src/dsp/circuit/engine.ts';
import { designCircuit } from '../src/dsp/circuit/design.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { DEFAULT_LIVE_FACTOR } from '../src/dsp/realtime/dual-slot-engine.ts';
import type { RootDevice } from '../src/dsp/wdf/newton-root.ts';

const BASE_HZ = 48000,
  SECONDS = 0.5,
  PEAK_VOLTS = 0.35,
  TONE_HZ = 196;
const FACTORS = [1, 2, 4, 8] as const;
/** The dual-slot benchmark's pair (bench/dual-slot.bench.ts): slot A and slot B. */
const PAIR = ['pentode-triode', 'triode-triode'] as const;
const RECORD = 20000;

interface Recorded {
  readonly device: RootDevice;
  readonly ports: number;
  readonly inputs: Float64Array;
  count: number;
  recorded: number;
}

function measure(template: string, factor: number) {
  const fs = BASE_HZ * factor;
  const engine = new CircuitEngine(designCircuit(TEMPLATES[template]!), fs);
  // bench-only access to the engine's devices (private in the engine)
  const devices = (engine as unknown as { devices: RootDevice[] }).devices;
  const recs: Recorded[] = devices.map((device) => ({
    device,
    ports: device.portCount,
    inputs: new Float64Array(RECORD * device.portCount),
    count: 0,
    recorded: 0,
  }));
  for (const rec of recs) {
    const inner = rec.device.evaluate.bind(rec.device);
    rec.device.evaluate = (v, o, i, d, dOff) => {
      rec.count++;
      if (rec.recorded < RECORD) {
        for (let k = 0; k < rec.ports; k++) rec.inputs[rec.recorded * rec.ports + k] = v[o + k]!;
        rec.recorded++;
      }
      inner(v, o, i, d, dOff);
    };
  }
  const n = Math.round(SECONDS * fs);
  for (const rec of recs) {
    rec.count = 0;
    rec.recorded = 0;
  }
  for (let k = 0; k < n; k++) engine.processSample(PEAK_VOLTS * Math.sin((2 * Math.PI * TONE_HZ * k) / fs));
  // replay through the same devices with the counters removed (timing loop, after warm-up)
  const perDevice = recs.map((rec) => {
    delete (rec.device as { evaluate?: unknown }).evaluate; // back to the prototype method
    const m = rec.ports,
      v = new Float64Array(m),
      i = new Float64Array(m),
      d = new Float64Array(16);
    const run = (reps: number) => {
      for (let r = 0; r < reps; r++)
        for (let s = 0; s < rec.recorded; s++) {
          for (let k = 0; k < m; k++) v[k] = rec.inputs[s * m + k]!;
          rec.device.evaluate(v, 0, i, d, 0);
        }
    };
    run(5);
    // the fastest of 7 timed passes (the machine is shared: slower passes are interference)
    let ns = Infinity;
    for (let pass = 0; pass < 7; pass++) {
      const reps = 4,
        t0 = performance.now();
      run(reps);
      ns = Math.min(ns, ((performance.now() - t0) * 1e6) / (reps * rec.recorded));
    }
    return { kind: rec.ports === 3 ? 'pentode' : 'triode', evaluationsPerFastSample: rec.count / n, nsPerEvaluation: ns };
  });
  const lawsSecondsPerSecond = perDevice.reduce((s, x) => s + x.evaluationsPerFastSample * fs * x.nsPerEvaluation * 1e-9, 0);
  return { template, factor, devices: perDevice, lawsLoadFraction: lawsSecondsPerSecond };
}

const results = PAIR.flatMap((t) => FACTORS.map((f) => measure(t, f)));
const floor = FACTORS.map((factor) => ({
  factor,
  lawsLoadFractionBothSlots: results.filter((r) => r.factor === factor).reduce((s, r) => s + r.lawsLoadFraction, 0),
}));
console.log(
  JSON.stringify(
    {
      command: import.meta.url.endsWith('.ts') ? 'npx tsx bench/laws.bench.ts' : 'node (esbuild bundle of bench/laws.bench.ts)',
      note: 'tube laws only (exact netlist-v1 equations), evaluations counted in the averaged engine; compare bench/dual-slot.bench.ts for the whole processor',
      defaultLiveFactor: DEFAULT_LIVE_FACTOR,
      slots: PAIR,
      floor,
      results,
    },
    null,
    2,
  ),
);
