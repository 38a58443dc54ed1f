// valvewright ac --design X [--json] [--points N] [--tone-parts A,B,C --tone-from NODE]
import { acAnalysis, identifyToneNetwork, logFrequencies, toneNetworkAc } from '../../dsp/analysis/ac.ts';
import { designCircuit } from '../../dsp/circuit/design.ts';
import { CircuitEngine } from '../../dsp/circuit/engine.ts';
import { CliError, optNumber, optString, parseArgs } from '../args.ts';
import { designArg } from '../design-load.ts';
import type { CommandIO } from '../main.ts';

const USAGE = 'usage: valvewright ac --design FILE|TEMPLATE [--json] [--points N] [--tone-parts ID,ID,... --tone-from NODE]';

export async function runAc(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['json', 'help'], ['design', 'points', 'tone-parts', 'tone-from']);
  if (a.options.has('help')) { io.out(USAGE); return 0; }
  const design = await designArg(a, USAGE);
  const points = optNumber(a, 'points', 61, (x) => (Number.isInteger(x) && x >= 2 && x <= 2000 ? null : 'must be an integer 2..2000'));
  const f = logFrequencies(20, 20000, points);
  const circuit = designCircuit(design);
  const op = new CircuitEngine(circuit, 48000).operatingPoint();
  const whole = acAnalysis(circuit, { op, frequenciesHz: f });
  const given = optString(a, 'tone-parts');
  let tone: { partIds: readonly string[]; drivenFrom: string } | null = null;
  if (given) {
    const from = optString(a, 'tone-from');
    if (!from) throw new CliError('--tone-parts needs --tone-from NODE (the node that drives the network)');
    tone = { partIds: given.split(',').map((s) => s.trim()).filter(Boolean), drivenFrom: from };
  } else {
    const t = identifyToneNetwork(circuit);
    if (t) tone = { partIds: t.elementIds, drivenFrom: t.drivenFrom };
  }
  const toneResp = tone ? toneNetworkAc(circuit, { elementIds: tone.partIds, drivenFrom: tone.drivenFrom }, { frequenciesHz: f }) : null;
  const pick = (r: typeof whole) => ({ magnitudeDb: r.magnitudeDb, phaseDeg: r.phaseDeg });
  const out = {
    frequenciesHz: f, whole: pick(whole),
    tone: tone && toneResp ? { parts: [...new Set(tone.partIds.map((id) => id.replace(/\.(1|2)$/, '')))], drivenFrom: tone.drivenFrom, ...pick(toneResp) } : null,
  };
  if (a.options.has('json')) { io.out(JSON.stringify(out, null, 2)); return 0; }
  io.out(`small-signal response of ${design.name} (input EMF to output${out.tone ? `; tone network ${out.tone.parts.join(', ')} from node ${out.tone.drivenFrom}` : ''})`);
  io.out('       Hz    whole dB   phase°     tone dB   phase°');
  f.forEach((hz, i) => io.out(`${hz.toFixed(1).padStart(9)} ${whole.magnitudeDb[i]!.toFixed(2).padStart(10)} ${whole.phaseDeg[i]!.toFixed(1).padStart(8)} ${toneResp ? toneResp.magnitudeDb[i]!.toFixed(2).padStart(11) + ' ' + toneResp.phaseDeg[i]!.toFixed(1).padStart(8) : ''}`));
  return 0;
}
