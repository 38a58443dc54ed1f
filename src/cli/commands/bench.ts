// valvewright bench [--json] [--seconds S] [--template T] [--tubes exact|table] [--in-process]:
// real-time factors (seconds of audio per second of compute) for each template at 1x, 2x, 4x and
// 8x oversampling of 48 kHz, on one thread. By default the measurement runs as one esbuild bundle
// in a child node process (bench/engine.bench.ts), i.e. the code as shipped in the browser build:
// under the tsx loader the same loop measured ~10-20 % slower (cross-module getters).
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { designCircuit } from '../../dsp/circuit/design.ts';
import { TEMPLATES } from '../../dsp/circuit/templates.ts';
import { CircuitEngine } from '../../dsp/circuit/engine.ts';
import type { TubeFunctions } from '../../dsp/tubes/devices.ts';
import { Oversampler, type OversamplingFactor } from '../../dsp/oversampling/oversampler.ts';
import { CliError, optNumber, parseArgs } from '../args.ts';
import type { CommandIO } from '../main.ts';

export interface BenchCase {
  readonly template: string;
  readonly oversample: OversamplingFactor;
  readonly audioSeconds: number;
  readonly computeSeconds: number;
  readonly realTimeFactor: number;
  /** Audio seconds per second of this thread's CPU time (less sensitive to other load). */
  readonly realTimeFactorCpu: number;
  readonly newtonIterationsPerSample: number;
  readonly tubeFunctions: TubeFunctions;
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
    for (const f of notes) for (let h = 1; h <= 6; h++) s += (Math.sin(2 * Math.PI * f * h * t) * Math.exp(-tn * (2 + h))) / h;
    x[k] = 0.1 * s;
  }
  return x;
}

export function benchCase(
  template: string,
  factor: OversamplingFactor,
  seconds: number,
  baseRateHz = 48000,
  tubeFunctions: TubeFunctions = 'exact',
): BenchCase {
  const design = TEMPLATES[template];
  if (!design) throw new Error(`unknown template ${template}`);
  // Same chain as render/oversampled.ts (interpolator, engine at factor x, decimator), built
  // here so the tube-function option can be passed to the engine.
  const engine = new CircuitEngine(designCircuit(design), baseRateHz * factor, { tubeFunctions });
  const up = new Oversampler(factor),
    down = new Oversampler(factor);
  const hi = new Float64Array(factor),
    hiOut = new Float64Array(factor);
  const reset = () => {
    engine.resetToOperatingPoint();
    up.reset(0);
    down.reset(engine.operatingPoint().nodes[engine.outputNodeName] ?? 0);
  };
  const step = (vin: number): number => {
    if (factor === 1) return engine.processSample(vin);
    up.upsample(vin, hi);
    for (let k = 0; k < factor; k++) hiOut[k] = engine.processSample(hi[k]!);
    return down.downsample(hiOut);
  };
  reset();
  const x = benchSignal(baseRateHz, seconds);
  // warm-up so the JIT has compiled the hot path
  for (let k = 0; k < Math.min(x.length, 4800); k++) step(x[k]!);
  reset();
  const before = engine.solverStats;
  const c0 = process.cpuUsage();
  const t0 = performance.now();
  let sink = 0;
  for (let k = 0; k < x.length; k++) sink += step(x[k]!);
  const computeSeconds = (performance.now() - t0) / 1000;
  const cpu = process.cpuUsage(c0);
  if (!Number.isFinite(sink)) throw new Error('bench produced a non-finite output');
  const after = engine.solverStats;
  return {
    template,
    oversample: factor,
    audioSeconds: seconds,
    computeSeconds,
    realTimeFactor: seconds / computeSeconds,
    realTimeFactorCpu: seconds / Math.max(1e-9, (cpu.user + cpu.system) / 1e6),
    newtonIterationsPerSample: (after.iterations - before.iterations) / Math.max(1, after.solves - before.solves),
    tubeFunctions,
  };
}

export interface BenchReport {
  readonly command: string;
  readonly node: string;
  readonly runtime: string;
  readonly baseRateHz: number;
  readonly threads: number;
  readonly cases: readonly BenchCase[];
}

/** Measure every case in this process. */
export function benchReport(
  command: string,
  names: readonly string[],
  seconds: number,
  tubes: readonly TubeFunctions[],
  runtime: string,
  line?: (s: string) => void,
): BenchReport {
  const cases: BenchCase[] = [];
  for (const tf of tubes)
    for (const name of names)
      for (const f of [1, 2, 4, 8] as const) {
        const c = benchCase(name, f, seconds, 48000, tf);
        cases.push(c);
        line?.(
          `${name.padEnd(16)} ${tf.padEnd(5)} ${String(f).padStart(2)}x  real-time factor ${c.realTimeFactor.toFixed(2)} (cpu ${c.realTimeFactorCpu.toFixed(2)})  ${c.newtonIterationsPerSample.toFixed(2)} Newton iterations/sample`,
        );
      }
  return { command, node: process.version, runtime, baseRateHz: 48000, threads: 1, cases };
}

/** Bundle bench/engine.bench.ts with esbuild (if installed) and run it in a child node; null if not possible. */
function runBundled(argv: readonly string[], io: CommandIO): number | null {
  const entry = fileURLToPath(new URL('../../../bench/engine.bench.ts', import.meta.url));
  const dir = mkdtempSync(join(tmpdir(), 'valvewright-bench-'));
  try {
    const out = join(dir, 'engine.bench.mjs');
    const build = spawnSync(
      process.execPath,
      [
        '-e',
        `require('esbuild').buildSync({ entryPoints: [${JSON.stringify(entry)}], bundle: true, platform: 'node', format: 'esm', outfile: ${JSON.stringify(out)}, logLevel: 'error' })`,
      ],
      { cwd: fileURLToPath(new URL('../../../', import.meta.url)), encoding: 'utf8' },
    );
    if (build.status !== 0) return null;
    const run = spawnSync(process.execPath, [out, ...argv], { encoding: 'utf8', maxBuffer: 64 << 20, stdio: ['ignore', 'pipe', 'pipe'] });
    for (const l of (run.stdout ?? '').split('\n')) if (l.length > 0) io.out(l);
    for (const l of (run.stderr ?? '').split('\n')) if (l.length > 0) io.err(l);
    return run.status ?? 1;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** Options shared by the CLI command and bench/engine.bench.ts. */
export function parseBenchArgs(argv: readonly string[]): { json: boolean; seconds: number; names: string[]; tubes: TubeFunctions[]; inProcess: boolean } {
  const a = parseArgs(argv, ['json', 'in-process'], ['seconds', 'template', 'tubes']);
  const seconds = optNumber(a, 'seconds', 2, (x) => (x > 0 && x <= 600 ? null : 'must be between 0 and 600'));
  const only = a.options.get('template');
  if (typeof only === 'string' && !TEMPLATES[only]) throw new CliError(`unknown template "${only}" (templates: ${Object.keys(TEMPLATES).join(', ')})`);
  const names = typeof only === 'string' ? [only] : Object.keys(TEMPLATES);
  const t = a.options.get('tubes');
  if (t !== undefined && t !== 'exact' && t !== 'table' && t !== 'both') throw new CliError('--tubes must be exact, table or both');
  const tubes: TubeFunctions[] = t === 'table' ? ['table'] : t === 'both' ? ['exact', 'table'] : ['exact'];
  return { json: a.options.has('json'), seconds, names, tubes, inProcess: a.options.has('in-process') };
}

export async function runBench(argv: readonly string[], io: CommandIO): Promise<number> {
  const o = parseBenchArgs(argv);
  if (!o.inProcess) {
    const status = runBundled(argv, io);
    if (status !== null) return status;
    io.err('valvewright bench: esbuild not available, measuring in this process (tsx loader)');
  }
  const command = `npx valvewright bench${argv.map((x) => ' ' + x).join('')}`;
  const report = benchReport(command, o.names, o.seconds, o.tubes, 'tsx loader (in process)', o.json ? undefined : io.out);
  if (o.json) io.out(JSON.stringify(report, null, 2));
  return 0;
}
