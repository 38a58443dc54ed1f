// valvewright netlist --design FILE|TEMPLATE: prints the netlist-v1 JSON.
import { designToNetlist } from '../../dsp/circuit/design.ts';
import { writeNetlist } from '../../dsp/circuit/netlist.ts';
import { CliError, loadDesign, optString, parseArgs } from '../args.ts';
import type { CommandIO } from '../main.ts';

export async function runNetlist(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, [], ['design']);
  const d = optString(a, 'design');
  if (!d) throw new CliError('missing --design FILE|TEMPLATE');
  io.out(writeNetlist(designToNetlist(await loadDesign(d))).trimEnd());
  return 0;
}
