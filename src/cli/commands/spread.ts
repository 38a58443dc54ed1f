// valvewright spread --design X --runs N --seed S [--json] [--workers W] [--write-cases DIR]
import { writeFile, mkdir } from 'node:fs/promises';
import { join } from 'node:path';
import { availableParallelism } from 'node:os';
import { summariseSpread, tubeCaseDesign } from '../../dsp/analysis/spread.ts';
import { CliError, optNumber, optString, parseArgs } from '../args.ts';
import { CIRCUIT_OPTIONS, loadDesignSource, sourceNotes } from '../circuit-load.ts';
import { spreadRunsParallel } from '../spread-workers.ts';
import type { CommandIO } from '../main.ts';

export const SPREAD_USAGE =
  'usage: valvewright spread (--design FILE|TEMPLATE | --netlist FILE) [--set PART.FIELD=VALUE ...] --runs N --seed S [--json] [--workers W] [--write-cases DIR]';

export async function runSpread(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['json'], [...CIRCUIT_OPTIONS, 'runs', 'seed', 'workers', 'write-cases']);
  const src = await loadDesignSource(a, { wiring: true, usage: SPREAD_USAGE });
  for (const l of sourceNotes(src)) io.err(l);
  // the model's design: the supply section's estimate as B+ where there is one
  const design = src.design;
  if (!a.options.has('runs') || !a.options.has('seed')) throw new CliError(`give --runs and --seed (${SPREAD_USAGE})`);
  const runs = optNumber(a, 'runs', 0, (x) => (Number.isInteger(x) && x >= 1 && x <= 100000 ? null : 'must be an integer 1..100000'));
  const seed = optNumber(a, 'seed', 0, (x) => (Number.isInteger(x) && x >= 0 && x <= 0xffffffff ? null : 'must be an integer 0..4294967295'));
  const workers = optNumber(a, 'workers', Math.min(4, availableParallelism()), (x) =>
    Number.isInteger(x) && x >= 1 && x <= 64 ? null : 'must be an integer 1..64',
  );
  const results = await spreadRunsParallel(design, runs, seed, workers);
  const s = summariseSpread(design, seed, results);
  const dir = optString(a, 'write-cases');
  if (dir) {
    await mkdir(dir, { recursive: true });
    for (const w of ['low', 'nominal', 'high'] as const) await writeFile(join(dir, `${w}.json`), JSON.stringify(tubeCaseDesign(design, w), null, 2) + '\n');
    io.err(`wrote ${dir}/low.json, nominal.json, high.json (render them with valvewright render --design ...)`);
  }
  if (a.options.has('json')) {
    io.out(JSON.stringify(s, null, 2));
    return 0;
  }
  io.out(`spread of ${design.name}: ${runs} runs, seed ${seed}; ${s.failedRuns.length} run(s) fail to bias or exceed a rating`);
  const f = (x: number | null | undefined, d = 3) => (x === undefined || x === null ? '-' : x.toPrecision(d));
  for (const [id, t] of Object.entries(s.tubes))
    io.out(
      `  ${id}: plate mA ${f(t.plateAmps && t.plateAmps.min * 1e3)} .. ${f(t.plateAmps && t.plateAmps.median * 1e3)} .. ${f(t.plateAmps && t.plateAmps.max * 1e3)}, Vgk (bias) ${f(t.vgk?.min)} .. ${f(t.vgk?.max)} V with contact potential ±${s.contactPotential.halfWidthVolts} V`,
    );
  if (s.gainDb1k) io.out(`  gain at 1 kHz: ${s.gainDb1k.min.toFixed(1)} .. ${s.gainDb1k.median.toFixed(1)} .. ${s.gainDb1k.max.toFixed(1)} dB`);
  if (s.outputPeakVolts) io.out(`  output peak at 0.5 V in: ${s.outputPeakVolts.min.toPrecision(3)} .. ${s.outputPeakVolts.max.toPrecision(3)} V`);
  for (const r of s.failedRuns.slice(0, 10)) io.out(`  run ${r.run}: ${r.failures.join('; ')}`);
  return 0;
}
