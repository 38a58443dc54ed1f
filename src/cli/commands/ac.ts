// valvewright ac (--design X | --netlist X) [--set ...] [--json] [--points N] [--tone-parts A,B,C --tone-from NODE]
import { acAnalysis, identifyToneNetwork, logFrequencies, toneNetworkAc, toneNetworkInCircuit } from '../../dsp/analysis/ac.ts';
import { toneControlEnds } from '../../dsp/analysis/voicing.ts';
import { CircuitEngine } from '../../dsp/circuit/engine.ts';
import { CliError, optNumber, optString, parseArgs } from '../args.ts';
import { CIRCUIT_OPTIONS, loadCircuitSource, sourceNotes } from '../circuit-load.ts';
import type { CommandIO } from '../main.ts';

export const AC_USAGE =
  'usage: valvewright ac (--design FILE|TEMPLATE | --netlist FILE) [--set PART.FIELD=VALUE ...] [--json] [--points N] [--tone-parts ID,ID,... --tone-from NODE]';

export async function runAc(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['json'], [...CIRCUIT_OPTIONS, 'points', 'tone-parts', 'tone-from']);
  const src = await loadCircuitSource(a, { wiring: true, usage: AC_USAGE });
  for (const l of sourceNotes(src)) io.err(l);
  const points = optNumber(a, 'points', 61, (x) => (Number.isInteger(x) && x >= 2 && x <= 2000 ? null : 'must be an integer 2..2000'));
  const f = logFrequencies(20, 20000, points);
  const circuit = src.circuit;
  const op = new CircuitEngine(circuit, 48000).operatingPoint();
  const whole = acAnalysis(circuit, { op, frequenciesHz: f });
  const given = optString(a, 'tone-parts');
  let tone: { partIds: readonly string[]; drivenFrom: string } | null = null;
  if (given) {
    const from = optString(a, 'tone-from');
    if (!from) throw new CliError('--tone-parts needs --tone-from NODE (the node that drives the network)');
    tone = {
      partIds: given
        .split(',')
        .map((s) => s.trim())
        .filter(Boolean),
      drivenFrom: from,
    };
  } else {
    const t = identifyToneNetwork(circuit);
    if (t) tone = { partIds: t.elementIds, drivenFrom: t.drivenFrom };
  }
  const net = tone ? { elementIds: tone.partIds, drivenFrom: tone.drivenFrom } : null;
  const ideal = net ? toneNetworkAc(circuit, net, { frequenciesHz: f }) : null;
  const driven = net ? toneNetworkInCircuit(circuit, op, net, f) : null;
  const ends = src.fromNetlist || !src.design ? null : toneControlEnds(src.design, op);
  const pick = (r: typeof whole) => ({ magnitudeDb: r.magnitudeDb, phaseDeg: r.phaseDeg });
  const out = {
    frequenciesHz: f,
    whole: pick(whole),
    supply: src.design ? { node: src.design.supply.node, volts: op.nodes[src.design.supply.node] ?? null, fromPowerSupply: src.supply !== null } : null,
    tone:
      tone && ideal && driven
        ? {
            parts: [...new Set(tone.partIds.map((id) => id.replace(/\.(1|2)$/, '')))],
            drivenFrom: tone.drivenFrom,
            // as the circuit drives it (from the stage's output impedance) and loads it
            sourceOhms: driven.sourceOhms,
            ...pick(driven.response),
            idealSource: pick(ideal),
            control: ends,
          }
        : null,
  };
  if (a.options.has('json')) {
    io.out(JSON.stringify(out, null, 2));
    return 0;
  }
  io.out(
    `small-signal response of ${src.label} (input EMF to output${out.tone ? `; tone network ${out.tone.parts.join(', ')} driven from node ${out.tone.drivenFrom} through ${(out.tone.sourceOhms / 1e3).toFixed(1)} k` : ''})`,
  );
  if (ends)
    io.out(
      `tone control ${ends.potId}: treble-cut corner ${ends.atPosition0Hz ? `${ends.atPosition0Hz.toFixed(0)} Hz` : 'none'} at 0 (darkest), ${ends.atPosition1Hz ? `${ends.atPosition1Hz.toFixed(0)} Hz` : 'none below 200 kHz'} at 10 (brightest); 10 kHz against 300 Hz: ${ends.tilt0Db.toFixed(1)} dB .. ${ends.tilt1Db.toFixed(1)} dB`,
    );
  io.out('       Hz    whole dB   phase°     tone dB   phase°   ideal-source dB');
  f.forEach((hz, i) =>
    io.out(
      `${hz.toFixed(1).padStart(9)} ${whole.magnitudeDb[i]!.toFixed(2).padStart(10)} ${whole.phaseDeg[i]!.toFixed(1).padStart(8)} ${driven ? driven.response.magnitudeDb[i]!.toFixed(2).padStart(11) + ' ' + driven.response.phaseDeg[i]!.toFixed(1).padStart(8) + ' ' + ideal!.magnitudeDb[i]!.toFixed(2).padStart(12) : ''}`,
    ),
  );
  return 0;
}
