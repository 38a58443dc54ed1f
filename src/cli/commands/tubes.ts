// valvewright tubes [--json]: the tube library by envelope (sections, models, grid laws, heater, ratings, sources).
import { TUBE_LIBRARY, tubeEnvelopes, tubeType, type TubeType } from '../../dsp/tubes/library.ts';
import { PLATE_MODEL_OF } from '../../dsp/tubes/registry.ts';
import { parseArgs } from '../args.ts';
import type { CommandIO } from '../main.ts';

const USAGE = "usage: valvewright tubes [--json]   (the tube library: envelopes, their sections' models and grid laws, heater, ratings, sources)";

function ratingsOf(t: TubeType): Record<string, number | string> {
  const { source: _s, ...r } = t.ratings;
  return { section: t.name, ...r };
}

export function tubesJson(): { tubes: unknown[] } {
  const tubes = Object.values(tubeEnvelopes()).map((e) => {
    const sections = e.sections.map(tubeType);
    const distinct = [...new Map(sections.map((t) => [t.name, t])).values()];
    return {
      type: e.type,
      sections: sections.map((t) => ({ kind: t.kind, model: { name: PLATE_MODEL_OF[t.kind], ...t.model }, gridCurrent: t.gridCurrent })),
      heater: { volts: e.heaterVolts, amps: e.heaterAmps },
      ratings: distinct.map(ratingsOf),
      sources: distinct.map((t) => ({
        section: t.name,
        model: t.modelSource,
        gridCurrent: t.gridSource,
        ratings: t.ratings.source,
        capacitance: t.capacitance.source,
      })),
    };
  });
  return { tubes };
}

export async function runTubes(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['json', 'help'], []);
  if (a.options.has('help')) {
    io.out(USAGE);
    return 0;
  }
  if (a.positional.length > 0) {
    io.err(`valvewright tubes: unexpected argument "${a.positional[0]}" (${USAGE})`);
    return 2;
  }
  if (a.options.has('json')) {
    io.out(JSON.stringify(tubesJson(), null, 2));
    return 0;
  }
  io.out('tube library (a design names a section type; sections of one envelope share its heater):');
  for (const e of Object.values(tubeEnvelopes())) {
    const kinds = e.sections.map((s) => tubeType(s).kind).join(' + ');
    io.out(
      `  ${e.type.padEnd(10)} ${kinds.padEnd(17)} heater ${e.heaterVolts} V ${e.heaterAmps} A   section types: ${[...new Set(e.sections)].map((s) => `"${s}"`).join(', ')}`,
    );
    for (const name of new Set(e.sections)) {
      const t = tubeType(name),
        r = t.ratings;
      io.out(
        `      ${name}: ${t.description}; ${Object.entries(t.model)
          .map(([k, v]) => `${k} ${v}`)
          .join(', ')}; grid ${t.gridCurrent.name}`,
      );
      io.out(
        `        ratings: plate ${r.plateVolts} V ${r.plateWatts} W${r.screenVolts !== undefined ? `, screen ${r.screenVolts} V ${r.screenWatts ?? '?'} W` : ''}${r.coldPlateVolts !== undefined ? `, cold start ${r.coldPlateVolts} V` : ''}, heater-cathode ${r.heaterCathodeVolts} V`,
      );
      io.out(`        sources: model: ${t.modelSource}; ratings: ${r.source}`);
      const c = t.capacitance,
        pf = (f: number) => +(f * 1e12).toPrecision(3);
      io.out(
        `        capacitance: grid-plate ${pf(c.gridPlateFarads)} pF, grid-cathode ${pf(c.gridCathodeFarads)} pF, plate-cathode ${pf(c.plateCathodeFarads)} pF (${c.source})`,
      );
    }
  }
  io.out(`${Object.keys(TUBE_LIBRARY).length} section types. "from memory" marks values not yet confirmed against a stored data sheet.`);
  return 0;
}
