// Allocation and cost of run-time value changes (CircuitEngine.setValues), as the audio thread
// makes them while a pot is turned (dual-slot-engine.ts: one setValues per glide step with the
// pot's two resistors). Per template: garbage collections and heap growth (heapUsed plus
// ArrayBuffers, process.memoryUsage) over 10 000 calls, and the time per call. Prints JSON with
// the command that produced it:
//   npx tsx bench/glide-alloc.bench.ts [--calls N] [--rate HZ]
// Heap growth is only the allocation when no collection ran in the window (gcEvents 0).
import { PerformanceObserver, performance, type PerformanceEntry } from 'node:perf_hooks';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { CircuitEngine } from '../src/dsp/circuit/engine.ts';
import { designCircuit, potLowerId, potResistors, potUpperId, type PotPart } from '../src/dsp/circuit/design.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import type { RootMatrices } from '../src/dsp/wdf/root-network.ts';

const argv = process.argv.slice(2);
const arg = (name: string, fallback: number): number => {
  const k = argv.indexOf(name);
  const v = k >= 0 ? Number(argv[k + 1]) : fallback;
  if (!(v > 0 && Number.isFinite(v))) throw new Error(`${name} must be a positive number`);
  return v;
};
const CALLS = Math.round(arg('--calls', 10_000));
const RATE_HZ = arg('--rate', 96_000); // 48 kHz at the default live factor 2
const PER = 10_000;
const POT_ID = 'VOL';
const STEPS = 64; // pot positions swept back and forth

setFlagsFromString('--expose-gc');
const gcFn: unknown = runInNewContext('gc');
const collect = typeof gcFn === 'function' ? (gcFn as () => void) : () => {};
const sleep = (ms: number) => new Promise<void>((resolve) => setTimeout(resolve, ms));

interface Row {
  template: string;
  nodes: number | null;
  wavePorts: number | null;
  nonlinearPorts: number | null;
  gcEventsPer10k: number;
  gcPauseMsPer10k: number;
  heapGrowthBytesPer10k: number;
  microsecondsPerSetValues: number;
}

async function measure(name: string): Promise<Row> {
  const design = TEMPLATES[name];
  if (!design) throw new Error(`no template ${name}`);
  const pot = design.parts.find((p): p is PotPart => p.kind === 'pot' && p.id === POT_ID);
  if (!pot) throw new Error(`${name} has no ${POT_ID} pot`);
  const e = new CircuitEngine(designCircuit(design), RATE_HZ);
  // the pot's two resistances at STEPS positions, computed before the measured loop
  const upper = new Float64Array(STEPS),
    lower = new Float64Array(STEPS);
  for (let s = 0; s < STEPS; s++) {
    const r = potResistors({ ...pot, position: 0.05 + (0.9 * s) / (STEPS - 1) });
    upper[s] = r.upperOhms;
    lower[s] = r.lowerOhms;
  }
  const updates = [
    { id: potUpperId(POT_ID), value: 0 },
    { id: potLowerId(POT_ID), value: 0 },
  ];
  const run = (n: number) => {
    for (let k = 0; k < n; k++) {
      const s = k % (2 * STEPS),
        at = s < STEPS ? s : 2 * STEPS - 1 - s;
      updates[0]!.value = upper[at]!;
      updates[1]!.value = lower[at]!;
      e.setValues(updates);
    }
  };
  run(3000); // warm-up: optimised code
  const entries: PerformanceEntry[] = [];
  const observer = new PerformanceObserver((list) => {
    for (const en of list.getEntries()) entries.push(en);
  });
  observer.observe({ entryTypes: ['gc'] });
  collect();
  await sleep(20);
  const m0 = process.memoryUsage();
  const t0 = performance.now();
  run(CALLS);
  const t1 = performance.now();
  const m1 = process.memoryUsage();
  await sleep(50);
  observer.disconnect();
  const inWindow = entries.filter((en) => en.startTime >= t0 && en.startTime <= t1);
  const lm = (e as { linearMatrices?: RootMatrices }).linearMatrices;
  const scale = PER / CALLS;
  return {
    template: name,
    nodes: lm ? lm.nodeCount : null,
    wavePorts: lm ? lm.nu : null,
    nonlinearPorts: lm ? lm.m : null,
    gcEventsPer10k: inWindow.length * scale,
    gcPauseMsPer10k: Number((inWindow.reduce((a, en) => a + en.duration, 0) * scale).toFixed(3)),
    heapGrowthBytesPer10k: Math.round((m1.heapUsed + m1.arrayBuffers - m0.heapUsed - m0.arrayBuffers) * scale),
    microsecondsPerSetValues: Number((((t1 - t0) * 1000) / CALLS).toFixed(3)),
  };
}

const rows: Row[] = [];
for (const name of Object.keys(TEMPLATES)) rows.push(await measure(name));
console.log(
  JSON.stringify(
    {
      command: `npx tsx bench/glide-alloc.bench.ts${argv.map((x) => ' ' + x).join('')}`,
      node: process.version,
      sampleRateHz: RATE_HZ,
      calls: CALLS,
      update: `setValues([${potUpperId(POT_ID)}, ${potLowerId(POT_ID)}]) sweeping the pot over ${STEPS} positions`,
      gcExposed: typeof gcFn === 'function',
      results: rows,
    },
    null,
    2,
  ),
);
