// valvewright spice (--design X | --netlist X) [--output FILE]: SPICE-syntax export.
import { writeFile } from 'node:fs/promises';
import { toSpice } from '../../dsp/analysis/spice.ts';
import { CliError, loadCircuitArg, optString, parseArgs } from '../args.ts';
import type { CommandIO } from '../main.ts';

export async function runSpice(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['help'], ['design', 'netlist', 'output']);
  if (a.options.has('help')) { io.out('usage: valvewright spice (--design FILE|TEMPLATE | --netlist FILE) [--output FILE.cir]'); return 0; }
  const loaded = await loadCircuitArg(a);
  const text = toSpice(loaded.netlist, { title: loaded.label });
  const out = optString(a, 'output');
  if (!out) { io.out(text.replace(/\n$/, '')); return 0; }
  try { await writeFile(out, text); } catch (e) { throw new CliError(`cannot write ${out} (${(e as NodeJS.ErrnoException).code ?? 'error'})`); }
  io.err(`wrote ${out}`);
  return 0;
}
