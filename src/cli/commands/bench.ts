// valvewright bench [--json] [--seconds S]: real-time factors (seconds of audio per second of
// compute) for each template at 1x, 2x, 4x and 8x oversampling of 48 kHz, on one thread.
import { designCircuit } from '../../dsp/circuit/design.ts';
import { TEMPLATES } from '../../dsp/circuit/templates.ts';
import { OversampledCircuit } from '../../dsp/render/oversampled.ts';
import type { OversamplingFactor } from '../../dsp/oversampling/oversampler.ts';
import { optNumber, parseArgs } from '../args.ts';
import type { CommandIO } from '../main.ts';

export interface BenchCase {
  readonly template: string;
  readonly oversample: OversamplingFactor;
  readonly audioSeconds: number;
  readonly computeSeconds: number;
  readonly realTimeFactor: number;
  readonly newtonIterationsPerSample: number;
}

/** A plucked-chord-like test signal: decaying partials at DI level (about 0.3 V peak). */
export function benchSignal(sampleRateHz: number, seconds: number): Float64Array {
  const n = Math.round(sampleRateHz * seconds);
  const x = new Float64Array(n);
  const notes = [82.41, 123.47, 164.81];
  for (let k = 0; k < n; k++) {
    const t = k / sampleRateHz;
    const tn = t % 1; // re-pluck every second
    let s = 0;
    for (const f of notes) for (let h = 1; h <= 6; h++) s += Math.sin(2 * Math.PI * f * h * t) * Math.exp(-tn * (2 + h)) / h;
    x[k] = 0.1 * s;
  }
  return x;
}

export function benchCase(template: string, factor: OversamplingFactor, seconds: number, baseRateHz = 48000): BenchCase {
  const design = TEMPLATES[template];
  if (!design) throw new Error(`unknown template ${template}`);
  const model = new OversampledCircuit(designCircuit(design), baseRateHz, factor);
  const x = benchSignal(baseRateHz, seconds);
  // warm-up so the JIT has compiled the hot path
  for (let k = 0; k < Math.min(x.length, 4800); k++) model.processSample(x[k]!);
  model.reset();
  const before = model.engine.solverStats;
  const t0 = performance.now();
  let sink = 0;
  for (let k = 0; k < x.length; k++) sink += model.processSample(x[k]!);
  const computeSeconds = (performance.now() - t0) / 1000;
  if (!Number.isFinite(sink)) throw new Error('bench produced a non-finite output');
  const after = model.engine.solverStats;
  return {
    template, oversample: factor, audioSeconds: seconds, computeSeconds,
    realTimeFactor: seconds / computeSeconds,
    newtonIterationsPerSample: (after.iterations - before.iterations) / Math.max(1, after.solves - before.solves),
  };
}

export async function runBench(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['json'], ['seconds', 'template']);
  const seconds = optNumber(a, 'seconds', 2, (x) => (x > 0 && x <= 600 ? null : 'must be between 0 and 600'));
  const only = a.options.get('template');
  const names = typeof only === 'string' ? [only] : Object.keys(TEMPLATES);
  const cases: BenchCase[] = [];
  for (const name of names) for (const f of [1, 2, 4, 8] as const) {
    const c = benchCase(name, f, seconds);
    cases.push(c);
    if (!a.options.has('json')) io.out(`${name.padEnd(16)} ${String(f).padStart(2)}x  real-time factor ${c.realTimeFactor.toFixed(2)}  (${c.newtonIterationsPerSample.toFixed(2)} Newton iterations/sample)`);
  }
  if (a.options.has('json')) {
    io.out(JSON.stringify({
      command: `npx valvewright bench --json${argv.filter((x) => x !== '--json').map((x) => ' ' + x).join('')}`,
      node: process.version, baseRateHz: 48000, threads: 1, cases,
    }, null, 2));
  }
  return 0;
}
