// --hum 50|60 for render: the design's B+ from its powerSupply estimate, with ripple injected per sample.
import { BPlusHum, designSupply } from '../dsp/analysis/design-supply.ts';
import { designCircuit, designToNetlist } from '../dsp/circuit/design.ts';
import { CliError } from './args.ts';
import type { CircuitSource } from './circuit-load.ts';

export function humForRender(loaded: CircuitSource, mainsText: string, sampleRateHz: number): { loaded: CircuitSource; hum: BPlusHum } {
  if (mainsText !== '50' && mainsText !== '60') throw new CliError(`--hum must be 50 or 60 (mains hertz), got "${mainsText}"`);
  if (loaded.fromNetlist || !loaded.given) throw new CliError('--hum needs --design (a netlist has no power-supply data)');
  if (!loaded.given.powerSupply)
    throw new CliError(`--hum needs a design with a "powerSupply" section (transformer, rectifier, reservoir); "${loaded.given.name}" has none`);
  // the same estimate as the model's B+ (circuit-load.ts), here at the mains frequency asked for
  const s = designSupply(loaded.given, undefined, { mainsHertz: Number(mainsText) as 50 | 60 });
  const d = s.design;
  return { loaded: { ...loaded, design: d, circuit: designCircuit(d), netlist: designToNetlist(d), supply: s }, hum: new BPlusHum(s, sampleRateHz) };
}
