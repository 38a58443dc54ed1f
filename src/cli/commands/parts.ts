// valvewright parts --design X [--csv]: parts list with ratings to buy.
import { checkDesign } from '../../dsp/analysis/check.ts';
import { designSupply } from '../../dsp/analysis/design-supply.ts';
import { partsCsv, partsRows } from '../../dsp/analysis/parts-list.ts';
import { parseArgs } from '../args.ts';
import { designArg } from '../design-load.ts';
import type { CommandIO } from '../main.ts';

const USAGE = 'usage: valvewright parts --design FILE|TEMPLATE [--csv]';

export async function runParts(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['csv', 'help'], ['design']);
  if (a.options.has('help')) { io.out(USAGE); return 0; }
  let design = await designArg(a, USAGE);
  let unloaded: number | undefined;
  if (design.powerSupply) { const s = designSupply(design); design = s.design; unloaded = s.unloadedVolts; }
  const r = checkDesign(design, unloaded !== undefined ? { unloadedSupplyVolts: unloaded } : {});
  const rows = partsRows(design, r.ratings, r.findings);
  if (a.options.has('csv')) { io.out(partsCsv(rows).replace(/\r\n$/, '')); return 0; }
  for (const x of rows) io.out(`${x.ref.padEnd(10)} ${x.kind.padEnd(14)} ${x.value.padEnd(8)} ${x.tolerance.padEnd(6)} ${x.buy.padEnd(14)} ${x.worstCase}  ${x.notes}`);
  return 0;
}
