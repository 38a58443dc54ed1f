// valvewright render (--design FILE|TEMPLATE | --netlist FILE) --input IN.wav --output OUT.wav
//   [--oversample N] [--antialias on|off] [--input-volts V] [--raw] [--hum 50|60]
import { resolve } from 'node:path';
import { OversampledCircuit, isOversamplingFactor } from '../../dsp/render/oversampled.ts';
import type { OversamplingFactor } from '../../dsp/oversampling/oversampler.ts';
import { PeakLimiter } from '../../dsp/render/limiter.ts';
import { CircuitEngine, type Antialiasing, type SolverStats } from '../../dsp/circuit/engine.ts';
import { CliError, optNumber, optString, parseArgs } from '../args.ts';
import { CIRCUIT_OPTIONS, loadCircuitSource, sourceNotes } from '../circuit-load.ts';
import { DEFAULT_INPUT_VOLTS_AT_FULL_SCALE, designCircuit, withVolumeFull } from '../../dsp/circuit/design.ts';
import { TruePeakMeter } from '../../dsp/analysis/true-peak.ts';
import { openWavFile, WavFileWriter } from '../wav-file.ts';
import { estimateOutputVoltsAtFullScale } from '../../dsp/render/levelling.ts';
import type { CommandIO } from '../main.ts';
import { humForRender } from '../hum.ts';

export const RENDER_USAGE =
  'usage: valvewright render (--design FILE|TEMPLATE | --netlist FILE) [--set PART.FIELD=VALUE ...] --input IN.wav --output OUT.wav [--oversample 1|2|4|8|16|32|64|128] [--antialias on|off] [--input-volts V] [--raw] [--hum 50|60] [--json]';
/** Output ceiling, dBTP (true peak, ITU-R BS.1770-4 Annex 2 meter: analysis/true-peak.ts). */
export const RENDER_CEILING_DBTP = -1;
const BLOCK = 8192;
export const DEFAULT_RENDER_OVERSAMPLE = 8;
const PROGRESS_INTERVAL_MS = 5000;

export async function runRender(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['raw', 'json'], [...CIRCUIT_OPTIONS, 'input', 'output', 'oversample', 'input-volts', 'hum', 'antialias']);
  const inPath = optString(a, 'input');
  const outPath = optString(a, 'output');
  if (!inPath || !outPath) throw new CliError(`missing --input or --output (${RENDER_USAGE})`);
  if (resolve(inPath) === resolve(outPath)) throw new CliError('--output is the same file as --input: refusing to overwrite the source');
  const raw = a.options.has('raw');
  const aaRaw = a.options.get('antialias');
  if (aaRaw !== undefined && aaRaw !== 'on' && aaRaw !== 'off') throw new CliError(`--antialias must be on or off (got "${String(aaRaw)}")`);
  if (raw && aaRaw !== undefined) throw new CliError('--raw renders the plain circuit (no averaging): drop --antialias');
  // --raw: the plain discretisation of the netlist (what the netlist-v1 reference solves);
  // no flag: the root is averaged up to 16x (OversampledCircuit default), plain above
  const antialiasing: Antialiasing | undefined = raw || aaRaw === 'off' ? 'off' : aaRaw === 'on' ? 'averaged' : undefined;
  const factor = optNumber(a, 'oversample', raw ? 1 : DEFAULT_RENDER_OVERSAMPLE, (x) =>
    isOversamplingFactor(x) ? null : 'must be 1, 2, 4, 8, 16, 32, 64 or 128',
  );
  if (raw && a.options.has('oversample')) throw new CliError("--raw renders the plain circuit at the file's rate: drop --oversample");
  const inputVolts = optNumber(a, 'input-volts', DEFAULT_INPUT_VOLTS_AT_FULL_SCALE, (x) => (x > 0 && x <= 100 ? null : 'must be between 0 and 100 volts'));
  if (raw && a.options.has('input-volts')) throw new CliError('--raw reads input samples as volts: drop --input-volts');
  const humText = optString(a, 'hum');
  const loaded0 = await loadCircuitSource(a, { wiring: true, usage: RENDER_USAGE });
  for (const l of sourceNotes(loaded0)) io.err(l);
  const withHum = humText === undefined ? null : humForRender(loaded0, humText, 1);
  const loaded = withHum ? withHum.loaded : loaded0;
  // levelled against the design with its volume control fully clockwise, so the knob is heard
  const levelRef = loaded.fromNetlist || !loaded.design ? loaded.circuit : designCircuit(withVolumeFull(loaded.design));
  const reader = await openWavFile(inPath);
  const h = reader.header;
  if (h.frameCount === 0) {
    await reader.close();
    throw new CliError(`${inPath} has no audio frames`);
  }
  if (h.channelCount > 1) io.err(`note: ${inPath} has ${h.channelCount} channels; mixing to mono`);
  const fs = h.sampleRate;
  const factorT = factor as OversamplingFactor;
  let model: CircuitEngine | OversampledCircuit;
  try {
    model = raw
      ? new CircuitEngine(loaded.circuit, fs, { antialiasing: 'off' })
      : new OversampledCircuit(loaded.circuit, fs, factorT, undefined, antialiasing ? { antialiasing } : undefined);
  } catch (e) {
    // e.g. no DC operating point: close the input before the error reaches the user
    await reader.close();
    throw e;
  }
  const outScale = raw ? 1 : 1 / estimateOutputVoltsAtFullScale(levelRef, fs, inputVolts);
  const limiter = new PeakLimiter(fs, RENDER_CEILING_DBTP);
  // the limiter bounds sample peaks; the rendered output is kept (float) and trimmed so its true
  // peak (inter-sample, 4x) stays under the ceiling too, then written
  const kept: Float32Array[] = [];
  const writer = await WavFileWriter.create(outPath, fs, 1, raw ? { bitDepth: 32, float: true } : { bitDepth: 24, float: false });
  const chans = Array.from({ length: h.channelCount }, () => new Float32Array(BLOCK));
  const mono = new Float64Array(BLOCK);
  const out = new Float32Array(BLOCK);
  const inGain = raw ? 1 : inputVolts;
  const hum = withHum ? humForRender(loaded0, humText!, fs).hum : null;
  const humEngine = model instanceof CircuitEngine ? model : model.engine;
  let nonFinite = 0;
  let trimGain = 1;
  let outTruePeakDbtp: number | null = null;
  // progress on stderr every few seconds of a long render (128x runs at about 0.17x real time)
  const started = Date.now();
  let lastReport = started;
  try {
    for (let f = 0; f < h.frameCount; f += BLOCK) {
      const now = Date.now();
      if (now - lastReport >= PROGRESS_INTERVAL_MS) {
        lastReport = now;
        const done = f / h.frameCount,
          left = ((now - started) / 1000) * (1 / done - 1);
        io.err(
          `rendering ${inPath}: ${(100 * done).toFixed(0)} % (${(f / fs).toFixed(1)} of ${(h.frameCount / fs).toFixed(1)} s, about ${left.toFixed(0)} s left)`,
        );
      }
      const n = Math.min(BLOCK, h.frameCount - f);
      await reader.read(f, n, chans);
      for (let k = 0; k < n; k++) {
        let s = 0;
        for (const c of chans) s += c[k]!;
        mono[k] = (s / chans.length) * inGain;
      }
      for (let k = 0; k < n; k++) {
        if (hum) humEngine.setSourceVolts(hum.sourceId, hum.next());
        let y = model.processSample(mono[k]!);
        if (!Number.isFinite(y)) {
          y = 0;
          nonFinite++;
        }
        out[k] = raw ? y : limiter.process(y * outScale);
      }
      if (raw) await writer.write([out], n);
      else kept.push(out.slice(0, n));
    }
    if (!raw) {
      trimGain = await writeUnderTruePeakCeiling(kept, writer, RENDER_CEILING_DBTP);
      outTruePeakDbtp = truePeakDbtp(kept, 1); // the blocks now hold what was written
    }
    await writer.finish();
  } catch (e) {
    await writer.abort();
    throw e;
  } finally {
    await reader.close();
  }
  const engine = model instanceof CircuitEngine ? model : model.engine;
  const stats = engine.solverStats;
  const summary = {
    output: outPath,
    frames: h.frameCount,
    sampleRateHz: fs,
    oversample: raw ? 1 : factor,
    antialias: engine.averagingDelaySamples > 0,
    raw,
    inputVoltsAtFullScale: raw ? null : inputVolts,
    outputVoltsAtFullScale: raw ? null : 1 / outScale,
    limiterMinGainDb: raw ? null : 20 * Math.log10(limiter.minGain),
    // the model's B+ at its node at rest (the power-supply estimate where the design has one)
    supplyVolts: loaded.fromNetlist || !loaded.design ? null : (engine.operatingPoint().nodes[loaded.design.supply.node] ?? null),
    ceilingDbtp: raw ? null : RENDER_CEILING_DBTP,
    truePeakTrimDb: raw ? null : 20 * Math.log10(trimGain),
    outputTruePeakDbtp: outTruePeakDbtp,
    newtonIterationsPerSample: stats.iterations / Math.max(1, stats.solves),
    newtonFailures: stats.failures,
    newtonFallbacks: stats.fallbacks,
    nonFiniteSamples: nonFinite,
  };
  const warning = solverWarning(stats);
  if (warning) io.err(warning);
  if (!raw)
    io.err(
      `input calibration: full scale = ${inputVolts} V peak at the circuit input (--input-volts; the workspace starts from the same ${DEFAULT_INPUT_VOLTS_AT_FULL_SCALE} V)`,
    );
  if (a.options.has('json')) io.out(JSON.stringify(summary));
  else
    io.err(
      `rendered ${h.frameCount} frames at ${fs} Hz (${raw ? 'raw volts' : `${factor}x oversampled, limited to ${RENDER_CEILING_DBTP} dBTP true peak${trimGain < 1 ? ` (trimmed ${(20 * Math.log10(trimGain)).toFixed(2)} dB for inter-sample peaks)` : ''}`}) to ${outPath}`,
    );
  return 0;
}

/** True peak of the kept blocks times `gain`, dBTP, by the project's meter (BS.1770-4 Annex 2). */
function truePeakDbtp(blocks: readonly Float32Array[], gain: number): number {
  const m = new TruePeakMeter(1);
  const tmp = new Float64Array(BLOCK);
  for (const b of blocks) {
    for (let k = 0; k < b.length; k++) tmp[k] = Math.fround(b[k]! * gain);
    m.process([tmp], 0, b.length);
  }
  return m.truePeakDbtp();
}

/**
 * Write the blocks scaled so the true peak stays at or under the ceiling (a static trim: the
 * sample-peak limiter already holds the sample peaks; only inter-sample overshoot is left).
 * Returns the gain applied. The writer quantises to 24 bits: a 0.01 dB margin covers that.
 */
async function writeUnderTruePeakCeiling(blocks: Float32Array[], writer: WavFileWriter, ceilingDbtp: number): Promise<number> {
  const tp = truePeakDbtp(blocks, 1);
  const limit = ceilingDbtp - 0.01;
  const gain = tp > limit ? Math.pow(10, (limit - tp) / 20) : 1;
  for (const b of blocks) {
    if (gain !== 1) for (let k = 0; k < b.length; k++) b[k] = b[k]! * gain;
    await writer.write([b], b.length);
  }
  return gain;
}

/**
 * One warning line when the circuit solver needed its fallback or failed on some samples (null
 * when it did neither): a render whose solver held samples is not the circuit's exact response there.
 */
export function solverWarning(stats: SolverStats): string | null {
  if (stats.fallbacks === 0 && stats.failures === 0) return null;
  return (
    `warning: the circuit solver needed its fallback (continuation) on ${stats.fallbacks} of ${stats.solves} circuit samples` +
    (stats.failures > 0
      ? `, and ${stats.failures} did not converge even so (each held the previous sample: the output there is not the circuit's)`
      : ' (all converged)')
  );
}
