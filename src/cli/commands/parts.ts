// valvewright parts (--design X | --netlist X) [--set ...] [--csv]: parts list with ratings to buy (the one worst-case sheet).
import { checkCircuit } from '../../dsp/analysis/check.ts';
import { partsCsv, partsRows } from '../../dsp/analysis/parts-list.ts';
import { parseArgs } from '../args.ts';
import { CIRCUIT_OPTIONS, loadDesignSource, sourceNotes } from '../circuit-load.ts';
import type { CommandIO } from '../main.ts';

export const PARTS_USAGE = 'usage: valvewright parts (--design FILE|TEMPLATE | --netlist FILE) [--set PART.FIELD=VALUE ...] [--csv]';

export async function runParts(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['csv'], [...CIRCUIT_OPTIONS]);
  const src = await loadDesignSource(a, { wiring: false, usage: PARTS_USAGE });
  for (const l of sourceNotes(src)) io.err(l);
  const r = checkCircuit(src.given);
  const rows = partsRows(r.model, r.ratings, r.findings);
  if (a.options.has('csv')) {
    io.out(partsCsv(rows).replace(/\r\n$/, ''));
    return 0;
  }
  for (const x of rows)
    io.out(`${x.ref.padEnd(10)} ${x.kind.padEnd(14)} ${x.value.padEnd(8)} ${x.tolerance.padEnd(6)} ${x.buy.padEnd(14)} ${x.worstCase}  ${x.notes}`);
  return 0;
}
