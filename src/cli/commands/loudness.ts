// `valvewright loudness FILE [--json]`: BS.1770-4 / EBU R128 loudness of a WAV file.
// The file is read in blocks (src/cli/wav-file.ts), so long files never sit decoded in memory.
// Errors are CliError (an Error) with one line; the dispatcher prints them.

import { LoudnessMeter, type LoudnessReport } from '../../dsp/analysis/loudness.ts';
import type { WavHeader } from '../../dsp/io/wav.ts';
import { CliError } from '../args.ts';
import { openWavFile } from '../wav-file.ts';

const USAGE = 'usage: valvewright loudness FILE [--json]';
const BLOCK_FRAMES = 65536;

interface LoudnessArgs {
  file: string;
  json: boolean;
}

function parseArgs(args: readonly string[]): LoudnessArgs | 'help' {
  let file: string | undefined;
  let json = false;
  for (const a of args) {
    if (a === '--json') json = true;
    else if (a === '--help' || a === '-h') return 'help';
    else if (a.startsWith('-') && a !== '-') throw new CliError(`loudness: unknown option ${a} (${USAGE})`);
    else if (file === undefined) file = a;
    else throw new CliError(`loudness: more than one FILE given ("${file}", "${a}") (${USAGE})`);
  }
  if (file === undefined) throw new CliError(`loudness: missing FILE (${USAGE})`);
  return { file, json };
}

/** JSON has no -Infinity: non-finite values become null. */
function finiteOrNull(v: number): number | null {
  return Number.isFinite(v) ? v : null;
}

function fmt(v: number, unit: string): string {
  return Number.isFinite(v) ? `${v.toFixed(1)} ${unit}` : `-inf ${unit}`;
}

async function measureFile(path: string): Promise<{ header: WavHeader; report: LoudnessReport }> {
  const reader = await openWavFile(path);
  try {
    const { header } = reader;
    const channels: Float32Array[] = [];
    for (let c = 0; c < header.channelCount; c++) channels.push(new Float32Array(BLOCK_FRAMES));
    const meter = new LoudnessMeter(header.sampleRate, header.channelCount);
    for (let frame = 0; frame < header.frameCount; frame += BLOCK_FRAMES) {
      const n = Math.min(BLOCK_FRAMES, header.frameCount - frame);
      await reader.read(frame, n, channels);
      meter.process(channels, n, 0);
    }
    return { header, report: meter.report() };
  } finally {
    await reader.close();
  }
}

export async function runLoudness(args: readonly string[], out: (line: string) => void): Promise<number> {
  const parsed = parseArgs(args);
  if (parsed === 'help') {
    out(USAGE);
    out('Measures integrated loudness, loudness range, true peak and maximum short-term loudness');
    out('(ITU-R BS.1770-4, EBU R128). --json prints one JSON object; unmeasurable values are null.');
    return 0;
  }
  const { header, report } = await measureFile(parsed.file);
  if (parsed.json) {
    out(
      JSON.stringify({
        integratedLufs: finiteOrNull(report.integratedLufs),
        loudnessRangeLu: finiteOrNull(report.loudnessRangeLu),
        truePeakDbtp: finiteOrNull(report.truePeakDbtp),
        shortTermMaxLufs: finiteOrNull(report.shortTermMaxLufs),
        samplePeakDbfs: finiteOrNull(report.samplePeakDbfs),
        momentaryMaxLufs: finiteOrNull(report.momentaryMaxLufs),
      }),
    );
    return 0;
  }
  const seconds = header.frameCount / header.sampleRate;
  out(`file: ${parsed.file} (${header.channelCount} ch, ${header.sampleRate} Hz, ${header.bitDepth}-bit ${header.format}, ${seconds.toFixed(2)} s)`);
  out(`integrated loudness: ${fmt(report.integratedLufs, 'LUFS')}`);
  out(`loudness range:      ${Number.isFinite(report.loudnessRangeLu) ? report.loudnessRangeLu.toFixed(1) : '-'} LU`);
  out(`true peak:           ${fmt(report.truePeakDbtp, 'dBTP')}`);
  out(`sample peak:         ${fmt(report.samplePeakDbfs, 'dBFS')}`);
  out(`short-term max:      ${fmt(report.shortTermMaxLufs, 'LUFS')}`);
  out(`momentary max:       ${fmt(report.momentaryMaxLufs, 'LUFS')}`);
  return 0;
}
