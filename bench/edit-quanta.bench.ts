// Worst render quanta around edits, in Node: the bundled dual-slot engine (both default slots
// at the live default), messages carrying plans built beforehand (as the workspace's plan worker
// does), every quantum timed after each edit. Finds what the worst quanta spend their time on
// without a browser (node --cpu-prof on this script). Prints JSON.
// Run: node --expose-gc --import tsx bench/edit-quanta.bench.ts --json [--runs N]
import { performance } from 'node:perf_hooks';
import { execFileSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { DualSlotEngine, DEFAULT_LIVE_FACTOR } from '../src/dsp/realtime/dual-slot-engine.ts';
import { buildSlotPlan as buildPlan, withoutSentTables, type SlotPlan } from '../src/dsp/circuit/plan.ts';
import { withPart, type Design } from '../src/dsp/circuit/design.ts';
import { EDIT_A, EDIT_B, EDIT_SCRIPT, EDIT_WINDOW_QUANTA, SESSION_QUANTA } from './edit-script.ts';
import type { OversamplingFactor } from '../src/dsp/oversampling/oversampler.ts';
import type { Slot, ToProcessor } from '../src/dsp/realtime/messages.ts';

const FS = 48000,
  Q = 128;
const A = EDIT_A,
  B = EDIT_B,
  script = EDIT_SCRIPT;
const designs: Partial<Record<Slot, Design>> = { A, B };
let factor: OversamplingFactor = DEFAULT_LIVE_FACTOR;
// as the workspace sends plans: each tube table once
const sent = new Set<string>();
const buildSlotPlan = (d: Design, fs: number, f: OversamplingFactor): SlotPlan => withoutSentTables(buildPlan(d, fs, f), sent);
const withPlan = (m: ToProcessor): ToProcessor => {
  if (m.type === 'load-design') {
    designs[m.slot] = m.design;
    return { ...m, plan: buildSlotPlan(m.design, FS, factor) };
  }
  if (m.type === 'set-part') {
    const d = designs[m.slot]!,
      next = withPart(d, m.part),
      old = d.parts.find((p) => p.id === m.part.id);
    designs[m.slot] = next;
    return old && old.kind === 'tube' && m.part.kind === 'tube' && old.type !== m.part.type ? { ...m, plan: buildSlotPlan(next, FS, factor) } : m;
  }
  const plans = () => ({ A: buildSlotPlan(designs.A!, FS, factor), B: buildSlotPlan(designs.B!, FS, factor) });
  if (m.type === 'set-quality') {
    factor = m.factor;
    return { ...m, plans: plans() };
  }
  if (m.type === 'reset') return { ...m, plans: plans() };
  return m;
};
const errors: string[] = [];
const RUNS = Number(process.argv[process.argv.indexOf('--runs') + 1] ?? 0) || 5;
if (!process.env.EDIT_QUANTA_CHILD) {
  // Each run in a fresh process (a cold JIT, as a new worklet is); per quantum the median over
  // the runs, so a run descheduled by another process on a loaded machine does not count as the
  // engine's cost, while a cost every run pays does.
  type Run = { ms: number[]; cpuMs: number[]; handleMs: number[]; handleCpuMs: number[]; errors: string[] };
  const runs: Run[] = [];
  for (let r = 0; r < RUNS; r++) {
    const out = execFileSync(process.execPath, [...process.execArgv, fileURLToPath(import.meta.url)], {
      env: { ...process.env, EDIT_QUANTA_CHILD: '1' },
      maxBuffer: 1 << 26,
    });
    runs.push(JSON.parse(out.toString()) as Run);
  }
  const median = (xs: number[]): number => {
    const s = [...xs].sort((p, q) => p - q);
    return s[Math.floor(s.length / 2)]!;
  };
  const med = (key: 'ms' | 'cpuMs' | 'handleMs' | 'handleCpuMs'): number[] => runs[0]![key].map((_, q) => median(runs.map((r) => r[key][q]!)));
  const errors = runs.flatMap((r) => r.errors);
  console.log(
    JSON.stringify(
      {
        command: 'node --expose-gc --import tsx bench/edit-quanta.bench.ts --json',
        node: process.version,
        sampleRateHz: FS,
        blockSize: Q,
        factor: DEFAULT_LIVE_FACTOR,
        runs: RUNS,
        note: "per quantum the median over RUNS fresh processes; handleMs: the event's messages (with plans, structured-cloned as through a port) handled between quanta on the audio thread; worstMs: the worst quantum of the EDIT_WINDOW_QUANTA from the event; wall = wall-clock time, cpu = processor time of the process (immune to preemption by other processes, but counting JIT and GC helper threads)",
        budgetMs: (Q / FS) * 1000,
        wall: summary(med('ms'), med('handleMs')),
        cpu: summary(med('cpuMs'), med('handleCpuMs')),
        errors,
      },
      null,
      2,
    ),
  );
  process.exit(0);
}
const engine = new DualSlotEngine({
  sampleRateHz: FS,
  factor,
  meterHz: 30,
  post: (m) => {
    if (m.type === 'error') errors.push(m.message);
  },
  initial: [
    { type: 'load-design', slot: 'A', design: A },
    { type: 'load-design', slot: 'B', design: B },
    { type: 'set-input-calibration', voltsAtFullScale: 0.5 },
    { type: 'set-output-scale', slot: 'A', voltsAtFullScale: 50 },
    { type: 'set-output-scale', slot: 'B', voltsAtFullScale: 50 },
  ],
});
const input = new Float32Array(Q),
  output = new Float32Array(Q);
const total = SESSION_QUANTA;
const ms = new Float64Array(total);
// processor time of the whole process (audio path, and any JIT or GC thread working meanwhile):
// unlike wall time, a quantum does not grow when the machine's other processes preempt this one
const cpuMs = new Float64Array(total);
const cpuNow = (): number => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
};
const handleMs: number[] = [],
  handleCpuMs: number[] = [];
let phase = 0;
// every plan built before the session (the plan worker's part, in another heap in the browser):
// the timed loop holds only the audio thread's work
const byQuantum = new Map(script.map((e) => [e.quantum, e.messages.map(withPlan)]));
(globalThis as { gc?: () => void }).gc?.();
for (let q = 0; q < total; q++) {
  for (let k = 0; k < Q; k++) input[k] = 0.7 * Math.sin((2 * Math.PI * 196 * phase++) / FS);
  const msgs = byQuantum.get(q);
  if (msgs) {
    const t = performance.now(),
      c = cpuNow();
    for (const m of msgs) engine.handle(structuredClone(m)); // the message arrives cloned, as through a port
    handleMs.push(performance.now() - t);
    handleCpuMs.push(cpuNow() - c);
  }
  const t0 = performance.now(),
    c0 = cpuNow();
  engine.process(input, output, Q);
  ms[q] = performance.now() - t0;
  cpuMs[q] = cpuNow() - c0;
}
if (process.env.EDIT_QUANTA_CHILD) {
  // one run's raw timings, for the parent's per-quantum median
  process.stdout.write(JSON.stringify({ ms: Array.from(ms), cpuMs: Array.from(cpuMs), handleMs, handleCpuMs, errors }));
  process.exit(0);
}
function summary(ms: number[], handleMs: number[]) {
  const budgetMs = (Q / FS) * 1000;
  const quiet = ms.slice(1150, 1300).sort((a, b) => a - b);
  const quietMedianMs = quiet[Math.floor(quiet.length / 2)]!;
  const perEvent = script.map((e, k) => {
    const w = ms.slice(e.quantum, e.quantum + EDIT_WINDOW_QUANTA);
    const worst = Math.max(...w);
    return {
      quantum: e.quantum,
      messages: e.messages.map((m) => m.type).join('+'),
      handleMs: handleMs[k]!,
      worstMs: worst,
      worstAt: e.quantum + w.indexOf(worst),
    };
  });
  const worstQuantumMs = Math.max(...perEvent.map((e) => e.worstMs));
  const worstHandleMs = Math.max(...perEvent.map((e) => e.handleMs));
  // a message handled between quanta delays the next one: the two add up on the audio thread
  const worstEditMs = Math.max(...perEvent.map((e) => e.handleMs + ms[e.quantum]!), worstQuantumMs);
  return {
    quietMedianMs,
    quietMedianFraction: quietMedianMs / budgetMs,
    worstQuantumMs,
    worstHandleMs,
    worstEditMs,
    worstEditFraction: worstEditMs / budgetMs,
    perEvent,
  };
}
