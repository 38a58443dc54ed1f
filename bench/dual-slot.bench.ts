// DualSlotEngine (the processor's core) in Node: real-time factor with both slots running, per
// oversampling factor, and heap growth per block in steady state. Prints JSON.
// Run: npx tsx bench/dual-slot.bench.ts
import { runInNewContext } from 'node:vm';
import { setFlagsFromString } from 'node:v8';
import { DualSlotEngine, DEFAULT_LIVE_FACTOR, type SlotModel } from '../src/dsp/realtime/dual-slot-engine.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import type { OversamplingFactor } from '../src/dsp/oversampling/oversampler.ts';

setFlagsFromString('--expose-gc');
const gc = runInNewContext('gc') as () => void;
const FS = 48000, BLOCK = 128;
const FACTORS: readonly OversamplingFactor[] = [1, 2, 4, 8];
const A = TEMPLATES['pentode-triode']!, B = TEMPLATES['triode-triode']!;

function run(factor: OversamplingFactor, seconds: number) {
  const e = new DualSlotEngine({ sampleRateHz: FS, factor, meterHz: 30, post: () => {}, initial: [
    { type: 'load-design', slot: 'A', design: A }, { type: 'load-design', slot: 'B', design: B },
    { type: 'set-input-calibration', voltsAtFullScale: 0.5 }, { type: 'set-output-scale', slot: 'A', voltsAtFullScale: 50 }, { type: 'set-output-scale', slot: 'B', voltsAtFullScale: 50 },
  ] });
  const inp = new Float32Array(BLOCK), out = new Float32Array(BLOCK);
  const blocks = Math.round((seconds * FS) / BLOCK);
  let phase = 0;
  const block = () => {
    for (let k = 0; k < BLOCK; k++) { inp[k] = 0.7 * Math.sin(phase); phase += (2 * Math.PI * 196) / FS; }
    e.process(inp, out, BLOCK);
  };
  for (let b = 0; b < 200; b++) block(); // warm-up (JIT)
  gc();
  const heap0 = process.memoryUsage().heapUsed;
  const t0 = performance.now();
  for (let b = 0; b < blocks; b++) block();
  const ms = performance.now() - t0;
  const heap1 = process.memoryUsage().heapUsed;
  const audioMs = (blocks * BLOCK * 1000) / FS;
  return { factor, audioSeconds: audioMs / 1000, realTimeFactor: audioMs / ms, loadFraction: ms / audioMs, heapBytesPerBlock: (heap1 - heap0) / blocks };
}

/** The same processing with allocation-free stand-in models: what DualSlotEngine itself allocates. */
function wrapperHeapBytesPerBlock(): number {
  const probes = new Float64Array(3);
  const stub: SlotModel = {
    processSample: (v) => v * 0.5,
    processRange: (src, dst, off, len) => { for (let k = off; k < off + len; k++) dst[k] = src[k]! * 0.5; }, latencySamples: 3, outputDcVolts: 0, probeValues: probes,
    setValues: () => {}, setSwitch: () => {}, setTubeSample: () => {}, reset: () => {},
  };
  const e = new DualSlotEngine({ sampleRateHz: FS, meterHz: 30, post: () => {}, createModel: () => stub, initial: [
    { type: 'load-design', slot: 'A', design: A }, { type: 'load-design', slot: 'B', design: B },
  ] });
  const inp = new Float32Array(BLOCK).fill(0.25), out = new Float32Array(BLOCK);
  for (let b = 0; b < 2000; b++) e.process(inp, out, BLOCK);
  gc();
  const h0 = process.memoryUsage().heapUsed;
  const blocks = 20000;
  for (let b = 0; b < blocks; b++) e.process(inp, out, BLOCK);
  return (process.memoryUsage().heapUsed - h0) / blocks;
}

const results = FACTORS.map((f) => run(f, f >= 8 ? 1 : 2));
const wrapper = wrapperHeapBytesPerBlock();
console.log(JSON.stringify({
  command: 'npx tsx bench/dual-slot.bench.ts', node: process.version, sampleRateHz: FS, blockSize: BLOCK,
  designs: { A: A.name, B: B.name }, slotsRunning: 2, defaultLiveFactor: DEFAULT_LIVE_FACTOR,
  note: 'realTimeFactor = audio seconds per wall second with both slots; loadFraction = its inverse (share of the audio thread budget); heapBytesPerBlock measured without gc between blocks (near 0: no per-block allocation)',
  dualSlotWrapperHeapBytesPerBlock: wrapper,
  loadAverage: (await import('node:os')).loadavg(),
  results,
}, null, 2));
