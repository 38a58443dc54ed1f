// DualSlotEngine (the processor's core) in Node: real-time factor with both slots running, per
// oversampling factor, and the minor collections during each run. Prints JSON. (Under tsx every
// imported call goes through a module accessor, which boxes doubles the shipped bundle does not:
// the allocation check that counts is tests/engine-alloc.test.ts, on an esbuild bundle.)
// Run: npx tsx bench/dual-slot.bench.ts
import { PerformanceObserver } from 'node:perf_hooks';
import { DualSlotEngine, DEFAULT_LIVE_FACTOR } from '../src/dsp/realtime/dual-slot-engine.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import type { OversamplingFactor } from '../src/dsp/oversampling/oversampler.ts';

let minor = 0;
new PerformanceObserver((list) => {
  for (const en of list.getEntries()) if ((en as unknown as { detail?: { kind?: number } }).detail?.kind === 1) minor++;
}).observe({ entryTypes: ['gc'] });
const tick = () => new Promise((r) => setTimeout(r, 30));
const FS = 48000,
  BLOCK = 128;
const FACTORS: readonly OversamplingFactor[] = [1, 2, 4, 8];
const A = TEMPLATES['pentode-triode']!,
  B = TEMPLATES['triode-triode']!;

async function run(factor: OversamplingFactor, seconds: number) {
  const e = new DualSlotEngine({
    sampleRateHz: FS,
    factor,
    meterHz: 30,
    post: () => {},
    initial: [
      { type: 'load-design', slot: 'A', design: A },
      { type: 'load-design', slot: 'B', design: B },
      { type: 'set-input-calibration', voltsAtFullScale: 0.5 },
      { type: 'set-output-scale', slot: 'A', voltsAtFullScale: 50 },
      { type: 'set-output-scale', slot: 'B', voltsAtFullScale: 50 },
    ],
  });
  const inp = new Float32Array(BLOCK),
    out = new Float32Array(BLOCK);
  const blocks = Math.round((seconds * FS) / BLOCK);
  let phase = 0;
  const block = () => {
    for (let k = 0; k < BLOCK; k++) {
      inp[k] = 0.7 * Math.sin(phase);
      phase += (2 * Math.PI * 196) / FS;
    }
    e.process(inp, out, BLOCK);
  };
  for (let b = 0; b < 200; b++) block(); // warm-up (JIT)
  await tick();
  minor = 0;
  const t0 = performance.now();
  for (let b = 0; b < blocks; b++) block();
  const ms = performance.now() - t0;
  await tick();
  const audioMs = (blocks * BLOCK * 1000) / FS;
  return { factor, audioSeconds: audioMs / 1000, realTimeFactor: audioMs / ms, loadFraction: ms / audioMs, minorCollections: minor };
}

const results = [];
for (const f of FACTORS) results.push(await run(f, f >= 8 ? 1 : 2));
console.log(
  JSON.stringify(
    {
      command: 'npx tsx bench/dual-slot.bench.ts',
      node: process.version,
      sampleRateHz: FS,
      blockSize: BLOCK,
      designs: { A: A.name, B: B.name },
      slotsRunning: 2,
      defaultLiveFactor: DEFAULT_LIVE_FACTOR,
      note: 'realTimeFactor = audio seconds per wall second with both slots; loadFraction = its inverse (share of the audio thread budget); minorCollections = scavenges during the timed run (under tsx; the bundled check is tests/engine-alloc.test.ts)',
      loadAverage: (await import('node:os')).loadavg(),
      results,
    },
    null,
    2,
  ),
);
