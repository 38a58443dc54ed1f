// valvewright pair --input DI.wav (--design A | --dry) --design B --out DIR [--target-lufs L]
//   [--peak-ceiling DB] [--oversample N] [--input-volts V] [--float] [--force] [--max-memory-mb M] [--json]
//
// Renders both sides from one DI take, matches their integrated loudness under a true-peak
// ceiling (src/dsp/render/pair.ts) and writes the two WAVs and pair-sheet.json / .md.
// Memory: pass 1 reads the DI in blocks, renders and measures; the float renders are kept in
// memory (Float32, 4 bytes a sample per side) when both fit in --max-memory-mb (default 300:
// about 13 min at 48 kHz); otherwise pass 2 renders again from the DI (renders are
// deterministic: every render starts from the DC operating point), so nothing long is ever
// held decoded. Pass 2 applies the gains, quantises, writes to temporary names, and measures
// what was written; files get their final names only when the pair checks out.
import { mkdir, rename, stat, unlink, writeFile } from 'node:fs/promises';
import { basename, extname, join, resolve } from 'node:path';
import { LoudnessMeter, type LoudnessReport } from '../../dsp/analysis/loudness.ts';
import { designCircuit, type Design } from '../../dsp/circuit/design.ts';
import { isOversamplingFactor } from '../../dsp/render/oversampled.ts';
import {
  AlignedRender,
  FLOAT32,
  PAIR_SHEET_JSON,
  PAIR_SHEET_MD,
  PAIR_TOLERANCE_LU,
  PCM24,
  buildPairSheet,
  checkPair,
  correctPairGains,
  designSheetEntry,
  jsonReplacer,
  pairFileName,
  pairSheetMarkdown,
  planPairGains,
  quantiseBlock,
  type PairGainPlan,
  type PairOutputFormat,
  type PairSideInfo,
  type PairVariant,
} from '../../dsp/render/pair.ts';
import type { OversamplingFactor } from '../../dsp/oversampling/oversampler.ts';
import { CliError, optNumber, optString, parseArgs } from '../args.ts';
import { loadModelDesigns, setSpecs } from '../circuit-load.ts';
import { DEFAULT_INPUT_VOLTS_AT_FULL_SCALE } from '../../dsp/circuit/design.ts';
import { openWavFile, WavFileWriter, type WavFileReader } from '../wav-file.ts';
import { renderInParallel } from '../pair-renders.ts';
/**
 * Clips for clients are rendered at 8x with the averaged root by default. Chosen from measured
 * alias level and speed: on netlists the templates do not cover, 8x averaged put a 2.5 kHz
 * sine's aliases at -73.7 dB against -59.7 dB for 32x plain, the former default (through
 * `render`, bench/render-alias.bench.ts); on the pentode-triode template 8x gives -72.5 / -77.0
 * dB near 1 / 2.5 kHz, 16x -80.8 / -75.3 (README, bench/alias.bench.ts), i.e. no clear gain for
 * twice the time. At 8x a 30 s pair renders in about a quarter of the take's length here (both
 * sides on worker threads in parallel; `pair` prints the time it took).
 */
export const PAIR_DEFAULT_OVERSAMPLE: OversamplingFactor = 8;
import type { CommandIO } from '../main.ts';

export const PAIR_USAGE =
  'usage: valvewright pair --input DI.wav (--design A | --dry) --design B --out DIR [--set PART.FIELD=VALUE ...] [--target-lufs L] [--peak-ceiling DB] [--oversample 1|2|4|8|16|32|64|128] [--input-volts V] [--float] [--force] [--max-memory-mb M] [--json]';
const BLOCK = 8192;
const MAX_WRITE_PASSES = 4;

interface Side {
  readonly variant: PairVariant;
  /** Name in the file name and the sheet. */
  readonly name: string;
  readonly design?: { readonly design: Design; readonly ref: string };
  readonly path: string;
}

function quoteArg(a: string): string {
  return /^[\w@%+=:,./-]+$/.test(a) ? a : `'${a.replace(/'/g, `'\\''`)}'`;
}

async function exists(path: string): Promise<boolean> {
  try {
    await stat(path);
    return true;
  } catch {
    return false;
  }
}

/** A fresh renderer per pass (null for dry): every pass produces the same samples. */
function makeRenderers(sides: readonly Side[], fs: number, factor: OversamplingFactor, inputVolts: number): (AlignedRender | null)[] {
  return sides.map((s) => (s.design ? new AlignedRender(designCircuit(s.design.design), fs, factor, inputVolts) : null));
}

/**
 * One run over the DI: mono mix, then each side's aligned output in Float32 blocks to `sink`.
 * `diSink` sees the raw DI channels (for the input's own loudness).
 */
async function runThroughDi(
  reader: WavFileReader,
  renderers: readonly (AlignedRender | null)[],
  sink: (side: number, block: Float32Array, n: number) => Promise<void> | void,
  diSink?: (channels: readonly Float32Array[], n: number) => void,
): Promise<void> {
  const h = reader.header;
  const chans = Array.from({ length: h.channelCount }, () => new Float32Array(BLOCK));
  const mono = new Float64Array(BLOCK);
  const tmp = new Float64Array(BLOCK);
  const blocks = renderers.map(() => new Float32Array(BLOCK));
  for (let f = 0; f < h.frameCount; f += BLOCK) {
    const n = Math.min(BLOCK, h.frameCount - f);
    await reader.read(f, n, chans);
    diSink?.(chans, n);
    for (let k = 0; k < n; k++) {
      let s = 0;
      for (const c of chans) s += c[k]!;
      mono[k] = s / chans.length;
    }
    for (let i = 0; i < renderers.length; i++) {
      const r = renderers[i];
      const b = blocks[i]!;
      if (!r) {
        for (let k = 0; k < n; k++) b[k] = mono[k]!;
        await sink(i, b, n);
      } else {
        const got = r.process(mono, n, tmp);
        for (let k = 0; k < got; k++) b[k] = tmp[k]!;
        if (got > 0) await sink(i, b, got);
      }
    }
  }
  for (let i = 0; i < renderers.length; i++) {
    const r = renderers[i];
    if (!r) continue;
    const got = r.flush(tmp);
    const b = blocks[i]!;
    for (let k = 0; k < got; k++) b[k] = tmp[k]!;
    if (got > 0) await sink(i, b, got);
  }
}

export async function runPair(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(
    argv,
    ['dry', 'force', 'float', 'json', 'help'],
    ['input', 'design', 'set', 'out', 'target-lufs', 'peak-ceiling', 'oversample', 'input-volts', 'max-memory-mb'],
  );
  if (a.options.has('help')) {
    io.out(PAIR_USAGE);
    io.out('Renders two designs (or dry and one design) from the same DI, matches their integrated loudness');
    io.out('(ITU-R BS.1770-4) to each other or to --target-lufs under a true-peak ceiling (default -1 dBTP),');
    io.out('and writes NAME.VARIANT.RATE.DEPTH.wav files plus pair-sheet.json and pair-sheet.md into DIR.');
    io.out('24-bit PCM by default, --float for 32-bit float. Existing files are kept unless --force.');
    return 0;
  }
  if (a.positional.length > 0) throw new CliError(`unexpected argument "${a.positional[0]}" (${PAIR_USAGE})`);
  const inPath = optString(a, 'input');
  const outDir = optString(a, 'out');
  if (!inPath) throw new CliError(`missing --input DI.wav (${PAIR_USAGE})`);
  if (!outDir) throw new CliError(`missing --out DIR (${PAIR_USAGE})`);
  const dry = a.options.has('dry');
  const refs = (a.all.get('design') ?? []).filter((v): v is string => typeof v === 'string');
  if (dry && refs.length !== 1) throw new CliError(`--dry pairs the DI with one design: give exactly one --design (got ${refs.length})`);
  if (!dry && refs.length !== 2) throw new CliError(`give two designs (--design A --design B) or --dry and one --design (got ${refs.length} --design)`);
  const factor = optNumber(a, 'oversample', PAIR_DEFAULT_OVERSAMPLE, (x) =>
    isOversamplingFactor(x) ? null : 'must be 1, 2, 4, 8, 16, 32, 64 or 128',
  ) as OversamplingFactor;
  const inputVolts = optNumber(a, 'input-volts', DEFAULT_INPUT_VOLTS_AT_FULL_SCALE, (x) => (x > 0 && x <= 100 ? null : 'must be between 0 and 100 volts'));
  const ceilingDbtp = optNumber(a, 'peak-ceiling', -1, (x) => (x <= 0 && x >= -60 ? null : 'must be between -60 and 0 dBTP'));
  const targetLufs = a.options.has('target-lufs')
    ? optNumber(a, 'target-lufs', 0, (x) => (x < 0 && x > -70 ? null : 'must be between -70 and 0 LUFS'))
    : undefined;
  const maxMemoryMb = optNumber(a, 'max-memory-mb', 300, (x) => (x >= 0 ? null : 'must be zero or more'));
  const format: PairOutputFormat = a.options.has('float') ? FLOAT32 : PCM24;
  const force = a.options.has('force');

  // --set values on each design that has the part; a power-supply section's estimate as B+
  const designs = (await loadModelDesigns(refs, setSpecs(a))).map((design, i) => ({ design, ref: refs[i]! }));
  const reader = await openWavFile(inPath);
  try {
    const h = reader.header;
    if (h.frameCount === 0) throw new CliError(`${inPath} has no audio frames`);
    const fs = h.sampleRate;
    const diName = basename(inPath, extname(inPath));
    const sideSpecs: Omit<Side, 'path'>[] = dry
      ? [
          { variant: 'dry', name: diName },
          { variant: 'b', name: designs[0]!.design.name, design: designs[0]! },
        ]
      : [
          { variant: 'a', name: designs[0]!.design.name, design: designs[0]! },
          { variant: 'b', name: designs[1]!.design.name, design: designs[1]! },
        ];
    const sides: Side[] = sideSpecs.map((s) => ({ ...s, path: join(outDir, pairFileName(s.name, s.variant, fs, format)) }));
    const sheetJsonPath = join(outDir, PAIR_SHEET_JSON);
    const sheetMdPath = join(outDir, PAIR_SHEET_MD);
    const targets = [...sides.map((s) => s.path), sheetJsonPath, sheetMdPath];
    if (targets.some((t) => resolve(t) === resolve(inPath))) throw new CliError(`an output name is the input file ${inPath}: refusing to overwrite the source`);
    if (!force) {
      const present: string[] = [];
      for (const t of targets) if (await exists(t)) present.push(t);
      if (present.length > 0) throw new CliError(`would overwrite ${present.join(', ')}: nothing written (use --force to replace)`);
    }
    try {
      await mkdir(outDir, { recursive: true });
    } catch (e) {
      throw new CliError(`cannot create output directory ${outDir} (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
    }
    if (h.channelCount > 1) io.err(`note: ${inPath} has ${h.channelCount} channels; mixing to mono`);

    // Pass 1: render, measure, maybe keep.
    const keep = 2 * h.frameCount * 4 <= maxMemoryMb * 1024 * 1024;
    const cache = keep ? sides.map(() => new Float32Array(h.frameCount)) : null;
    const cachePos = [0, 0];
    const meters = sides.map(() => new LoudnessMeter(fs, 1));
    const diMeter = new LoudnessMeter(fs, h.channelCount);
    io.err(
      `pass 1: rendering ${sides.map((s) => `${s.variant} (${s.name})`).join(' and ')} from ${inPath}, ${(h.frameCount / fs).toFixed(1)} s at ${factor}x${keep ? ', kept in memory' : ', not kept (will render again)'}`,
    );
    const t0 = Date.now();
    let renderers = makeRenderers(sides, fs, factor, inputVolts);
    const ops = renderers.map((r) => r?.model.engine.operatingPoint() ?? null);
    const latency = renderers.find((r) => r !== null);
    let nonFinite = 0;
    if (cache) {
      // the processed sides on worker threads in parallel; the DI (and a dry side) here meanwhile
      const jobs = sides.flatMap((s, i) => (s.design ? [{ side: i, job: { inPath, design: s.design.design, factor, inputVolts } }] : []));
      const done = jobs.map(() => 0);
      let shown = -1;
      const progress = (j: number, frames: number): void => {
        done[j] = frames;
        const pct = Math.floor((100 * Math.min(...done)) / h.frameCount);
        if (pct >= shown + 10) {
          shown = pct - (pct % 10);
          io.err(`pass 1: ${shown} % rendered (${((Date.now() - t0) / 1000).toFixed(1)} s)`);
        }
      };
      const renders = renderInParallel(
        jobs.map((j) => j.job),
        progress,
      );
      await runThroughDi(
        reader,
        sides.map(() => null),
        (i, b, n) => {
          if (sides[i]!.design) return;
          cache[i]!.set(b.subarray(0, n), cachePos[i]);
          cachePos[i]! += n;
        },
        (chans, n) => diMeter.process(chans, n, 0),
      );
      const results = await renders;
      jobs.forEach((j, k) => {
        cache[j.side]!.set(results[k]!.samples.subarray(0, h.frameCount));
        nonFinite += results[k]!.nonFiniteSamples;
      });
      for (let i = 0; i < sides.length; i++) {
        const c = cache[i]!;
        for (let f = 0; f < c.length; f += BLOCK) meters[i]!.process([c.subarray(f, Math.min(c.length, f + BLOCK))], Math.min(BLOCK, c.length - f), 0);
      }
    } else {
      await runThroughDi(
        reader,
        renderers,
        (i, b, n) => meters[i]!.process([b], n, 0),
        (chans, n) => diMeter.process(chans, n, 0),
      );
      nonFinite = renderers.reduce((s, r) => s + (r?.nonFiniteSamples ?? 0), 0);
    }
    io.err(`pass 1: rendered in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
    if (nonFinite > 0) io.err(`warning: ${nonFinite} non-finite samples in the renders were replaced by 0`);
    const rendered = [meters[0]!.report(), meters[1]!.report()] as const;
    const diReport = diMeter.report();
    let plan: PairGainPlan;
    try {
      plan = planPairGains(rendered, { ceilingDbtp, ...(targetLufs !== undefined ? { targetLufs } : {}) });
    } catch (e) {
      throw new CliError(
        (e as Error).message.replace(/file (\d) of the pair/, (_m, d: string) => `${sides[Number(d) - 1]!.variant} (${sides[Number(d) - 1]!.name})`),
      );
    }

    // Pass 2: gain, quantise, write, measure what was written; correct and repeat if needed.
    let finals: readonly [LoudnessReport, LoudnessReport] = rendered;
    let passes = 0;
    for (;;) {
      passes++;
      io.err(`pass ${passes + 1}: writing with gains ${plan.gainsDb.map((g) => `${g.toFixed(2)} dB`).join(', ')}`);
      const writers = await Promise.all(sides.map((s) => WavFileWriter.create(s.path, fs, 1, format)));
      const outMeters = sides.map(() => new LoudnessMeter(fs, 1));
      const q = new Float32Array(BLOCK);
      const emit = async (i: number, b: Float32Array, n: number) => {
        quantiseBlock(b, n, plan.gains[i as 0 | 1], format, q);
        outMeters[i]!.process([q], n, 0);
        await writers[i]!.write([q], n);
      };
      try {
        if (cache) {
          for (let i = 0; i < sides.length; i++) {
            const c = cache[i]!;
            for (let f = 0; f < c.length; f += BLOCK) await emit(i, c.subarray(f, Math.min(c.length, f + BLOCK)), Math.min(BLOCK, c.length - f));
          }
        } else {
          renderers = makeRenderers(sides, fs, factor, inputVolts);
          await runThroughDi(reader, renderers, emit);
        }
      } catch (e) {
        await Promise.all(writers.map((w) => w.abort()));
        throw e;
      }
      finals = [outMeters[0]!.report(), outMeters[1]!.report()];
      const check = checkPair(plan, finals);
      const acceptable = check.underCeiling && check.differenceLu <= PAIR_TOLERANCE_LU;
      if (check.settled || (passes >= MAX_WRITE_PASSES && acceptable)) {
        await Promise.all(writers.map((w) => w.finish()));
        break;
      }
      await Promise.all(writers.map((w) => w.abort()));
      if (passes >= MAX_WRITE_PASSES) {
        throw new CliError(
          `could not match the pair within ${PAIR_TOLERANCE_LU} LU under ${ceilingDbtp} dBTP after ${passes} passes (difference ${check.differenceLu.toFixed(3)} LU): nothing written`,
        );
      }
      plan = correctPairGains(plan, finals);
    }

    const sideInfo = (i: 0 | 1): PairSideInfo => ({
      variant: sides[i]!.variant,
      file: basename(sides[i]!.path),
      source: sides[i]!.name,
      rendered: rendered[i],
      final: finals[i],
    });
    const commandLine = ['valvewright', 'pair', ...argv].map(quoteArg).join(' ');
    const sheet = buildPairSheet({
      commandLine,
      input: { file: inPath, sampleRateHz: fs, channelCount: h.channelCount, frames: h.frameCount, loudness: diReport },
      oversample: factor,
      inputVoltsAtFullScale: inputVolts,
      format,
      latencyCompensation: latency
        ? `processed renders advanced by ${latency.advanceSamples} samples (oversampler latency ${latency.latencySamples.toFixed(3)} samples, rounded); the dry file is the DI unshifted; every file has the DI's ${h.frameCount} frames`
        : 'none needed (no oversampling latency)',
      plan,
      passes,
      sides: [sideInfo(0), sideInfo(1)],
      designs: sides.flatMap((s, i) => (s.design && ops[i] ? [designSheetEntry(s.design.design, s.design.ref, ops[i]!)] : [])),
    });
    await writeAtomic(sheetJsonPath, `${JSON.stringify(sheet, jsonReplacer, 2)}\n`);
    await writeAtomic(sheetMdPath, pairSheetMarkdown(sheet));

    io.err(`pair ready in ${((Date.now() - t0) / 1000).toFixed(1)} s for ${(h.frameCount / fs).toFixed(1)} s of DI`);
    if (a.options.has('json')) {
      io.out(
        JSON.stringify({ files: sides.map((s) => s.path), sheet: [sheetJsonPath, sheetMdPath], matching: sheet.matching, loudness: sheet.files }, jsonReplacer),
      );
    } else {
      for (const f of sheet.files)
        io.out(`${join(outDir, f.file)}: ${f.integratedLufs.toFixed(2)} LUFS, ${f.truePeakDbtp.toFixed(2)} dBTP, gain ${f.gainDb.toFixed(2)} dB`);
      io.out(`${sheetJsonPath}, ${sheetMdPath}: ${sheet.matching.note}`);
    }
    return 0;
  } finally {
    await reader.close();
  }
}

async function writeAtomic(path: string, text: string): Promise<void> {
  const tmp = `${path}.partial-${process.pid}`;
  try {
    await writeFile(tmp, text, 'utf8');
    await rename(tmp, path);
  } catch (e) {
    await unlink(tmp).catch(() => undefined);
    throw new CliError(`cannot write ${path} (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
}
