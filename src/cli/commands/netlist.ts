// valvewright netlist --design FILE|TEMPLATE [--set PART.FIELD=VALUE ...]: prints the netlist-v1 JSON.
import { writeNetlist } from '../../dsp/circuit/netlist.ts';
import { parseArgs } from '../args.ts';
import { loadCircuitSource, sourceNotes } from '../circuit-load.ts';
import type { CommandIO } from '../main.ts';

export const NETLIST_USAGE =
  'usage: valvewright netlist --design FILE|TEMPLATE [--set PART.FIELD=VALUE ...]   (a design with a power-supply section is written with the estimated B+)';

export async function runNetlist(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, [], ['design', 'set']);
  const loaded = await loadCircuitSource(a, { wiring: true, usage: NETLIST_USAGE });
  for (const l of sourceNotes(loaded)) io.err(l);
  io.out(writeNetlist(loaded.netlist).trimEnd());
  return 0;
}
