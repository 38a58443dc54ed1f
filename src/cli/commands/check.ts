// valvewright check --design X [--json] [--max-input-volts V] [--unloaded-volts V]: wiring check and worst-case ratings.
import { checkDesign } from '../../dsp/analysis/check.ts';
import { designSupply } from '../../dsp/analysis/design-supply.ts';
import { optNumber, parseArgs } from '../args.ts';
import { designArg } from '../design-load.ts';
import type { CommandIO } from '../main.ts';

const USAGE = 'usage: valvewright check --design FILE|TEMPLATE [--json] [--max-input-volts V] [--unloaded-volts V]';

export async function runCheck(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['json', 'help'], ['design', 'max-input-volts', 'unloaded-volts']);
  if (a.options.has('help')) { io.out(USAGE); return 0; }
  let design = await designArg(a, USAGE);
  const maxIn = optNumber(a, 'max-input-volts', 2, (x) => (x > 0 && x <= 100 ? null : 'must be between 0 and 100 volts'));
  let unloaded = optNumber(a, 'unloaded-volts', Number.NaN, (x) => (x > 0 && x <= 2000 ? null : 'must be between 0 and 2000 volts'));
  let supplyNote: string | null = null;
  if (design.powerSupply) {
    const s = designSupply(design);
    design = s.design;
    if (Number.isNaN(unloaded)) unloaded = s.unloadedVolts;
    supplyNote = `B+ from the powerSupply estimate: ${s.loadedVolts.toFixed(1)} V loaded, ${s.unloadedVolts.toFixed(1)} V unloaded`;
  }
  const r = checkDesign(design, { maxInputVolts: maxIn, ...(Number.isNaN(unloaded) ? {} : { unloadedSupplyVolts: unloaded }) });
  const errors = r.findings.filter((f) => f.severity === 'error').length;
  if (a.options.has('json')) {
    io.out(JSON.stringify({ findings: r.findings, ratings: r.ratings, ...(supplyNote ? { supply: supplyNote } : {}) }, null, 2));
    return errors > 0 ? 1 : 0;
  }
  io.out(`check of ${design.name}: ${errors} error(s), ${r.findings.filter((f) => f.severity === 'warning').length} warning(s), ${r.findings.filter((f) => f.severity === 'note').length} note(s)`);
  if (supplyNote) io.out(`  ${supplyNote}`);
  for (const f of r.findings) io.out(`  ${f.severity.toUpperCase().padEnd(7)} ${f.code} [${f.parts.join(', ')}] ${f.message}`);
  io.out('ratings to buy (worst case over warm idle, cold start, maximum input):');
  for (const c of r.ratings.capacitors) io.out(`  ${c.id.padEnd(10)} ${c.worstVolts.toFixed(1).padStart(7)} V (${c.worstCondition}) -> ${c.buyVolts ?? '?'} V`);
  for (const x of r.ratings.resistors) io.out(`  ${x.id.padEnd(10)} ${x.worstWatts.toPrecision(3).padStart(7)} W (${x.worstCondition}) -> ${x.buyWatts ?? '?'} W`);
  for (const t of r.ratings.tubes) io.out(`  ${t.id.padEnd(10)} ${t.type}: plate ${Math.max(t.plateWatts.warm ?? 0, t.plateWatts.maxInput ?? 0).toFixed(3)} W of ${t.plateWatts.max} W, heater-cathode ${t.heaterCathode.worstVolts.toFixed(0)} V of ${t.heaterCathode.max} V, grid circuit ${(t.gridCircuitOhms / 1e6).toPrecision(3)} M of ${(t.maxGridCircuitOhms / 1e6).toPrecision(3)} M`);
  return errors > 0 ? 1 : 0;
}
