// --hum 50|60 for render: the design's B+ from its powerSupply estimate, with ripple injected per sample.
import { BPlusHum, designSupply } from '../dsp/analysis/design-supply.ts';
import { designCircuit, designToNetlist } from '../dsp/circuit/design.ts';
import { CliError, type LoadedCircuit } from './args.ts';

export function humForRender(loaded: LoadedCircuit, mainsText: string, sampleRateHz: number): { loaded: LoadedCircuit; hum: BPlusHum } {
  if (mainsText !== '50' && mainsText !== '60') throw new CliError(`--hum must be 50 or 60 (mains hertz), got "${mainsText}"`);
  if (!loaded.design) throw new CliError('--hum needs --design (a netlist has no power-supply data)');
  if (!loaded.design.powerSupply) throw new CliError(`--hum needs a design with a "powerSupply" section (transformer, rectifier, reservoir); "${loaded.design.name}" has none`);
  const s = designSupply(loaded.design, undefined, { mainsHertz: Number(mainsText) as 50 | 60 });
  const d = s.design;
  return { loaded: { label: loaded.label, circuit: designCircuit(d), netlist: designToNetlist(d), design: d }, hum: new BPlusHum(s, sampleRateHz) };
}
