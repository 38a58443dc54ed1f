// valvewright spice (--design X | --netlist X) [--set ...] [--output FILE]: SPICE-syntax export.
import { writeFile } from 'node:fs/promises';
import { toSpice } from '../../dsp/analysis/spice.ts';
import { CliError, optString, parseArgs } from '../args.ts';
import { CIRCUIT_OPTIONS, loadCircuitSource, sourceNotes } from '../circuit-load.ts';
import type { CommandIO } from '../main.ts';

export const SPICE_USAGE = 'usage: valvewright spice (--design FILE|TEMPLATE | --netlist FILE) [--set PART.FIELD=VALUE ...] [--output FILE.cir]';

export async function runSpice(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, [], [...CIRCUIT_OPTIONS, 'output']);
  const loaded = await loadCircuitSource(a, { wiring: true, usage: SPICE_USAGE });
  for (const l of sourceNotes(loaded)) io.err(l);
  const text = toSpice(loaded.netlist, { title: loaded.label });
  const out = optString(a, 'output');
  if (!out) {
    io.out(text.replace(/\n$/, ''));
    return 0;
  }
  try {
    await writeFile(out, text);
  } catch (e) {
    throw new CliError(`cannot write ${out} (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
  io.err(`wrote ${out}`);
  return 0;
}
