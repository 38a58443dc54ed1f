// valvewright check (--design X | --netlist X) [--set ...] [--json] [--max-input-volts V] [--unloaded-volts V]:
// wiring check and worst-case ratings (the one sheet: dsp/analysis/check.ts checkCircuit).
import { checkCircuit } from '../../dsp/analysis/check.ts';
import { resistorWorkingVolts } from '../../dsp/analysis/ratings-sheet.ts';
import { optNumber, parseArgs } from '../args.ts';
import { CIRCUIT_OPTIONS, loadDesignSource } from '../circuit-load.ts';
import type { CommandIO } from '../main.ts';

export const CHECK_USAGE =
  'usage: valvewright check (--design FILE|TEMPLATE | --netlist FILE) [--set PART.FIELD=VALUE ...] [--json] [--max-input-volts V] [--unloaded-volts V]';

export async function runCheck(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['json'], [...CIRCUIT_OPTIONS, 'max-input-volts', 'unloaded-volts']);
  const src = await loadDesignSource(a, { wiring: false, usage: CHECK_USAGE });
  const maxIn = optNumber(a, 'max-input-volts', 2, (x) => (x > 0 && x <= 100 ? null : 'must be between 0 and 100 volts'));
  const unloaded = optNumber(a, 'unloaded-volts', Number.NaN, (x) => (x > 0 && x <= 2000 ? null : 'must be between 0 and 2000 volts'));
  const r = checkCircuit(src.given, { maxInputVolts: maxIn, ...(Number.isNaN(unloaded) ? {} : { unloadedSupplyVolts: unloaded }) });
  const count = (s: string) => r.findings.filter((f) => f.severity === s).length;
  const errors = count('error');
  const supply = r.supply
    ? {
        modelVolts: r.model.supply.volts,
        modelOhms: r.model.supply.ohms,
        loadedVolts: r.supply.loadedVolts,
        unloadedVolts: r.supply.unloadedVolts,
        ...(r.primary ? { primaryAmps: r.primary.primaryAmps, mainsVolts: r.primary.mainsVolts, slowBlowFuseAmps: r.primary.fuseAmps } : {}),
      }
    : null;
  if (a.options.has('json')) {
    io.out(
      JSON.stringify(
        { findings: r.findings, ratings: r.ratings, ...(supply ? { supply } : {}), ...(src.fromNetlist ? { fromNetlist: { lost: src.lost } } : {}) },
        null,
        2,
      ),
    );
    return errors > 0 ? 1 : 0;
  }
  io.out(`check of ${src.label}: ${errors} error(s), ${count('warning')} warning(s), ${count('note')} note(s)`);
  if (src.fromNetlist) for (const l of src.lost) io.out(`  from a netlist: ${l}`);
  if (supply)
    io.out(
      `  B+ from the power-supply section: ${supply.loadedVolts.toFixed(1)} V loaded, ${supply.unloadedVolts.toFixed(1)} V unloaded (model: ${supply.modelVolts.toFixed(1)} V behind ${supply.modelOhms.toFixed(0)} ohms)`,
    );
  for (const f of r.findings) io.out(`  ${f.severity.toUpperCase().padEnd(7)} ${f.code} [${f.parts.join(', ')}] ${f.message}`);
  io.out(`ratings to buy (worst case over warm idle, cold start at ${r.ratings.conditions.coldSupplyVolts.toFixed(0)} V, maximum input):`);
  for (const c of r.ratings.capacitors) io.out(`  ${c.id.padEnd(10)} ${c.worstVolts.toFixed(1).padStart(7)} V (${c.worstCondition}) -> ${c.buyVolts ?? '?'} V`);
  for (const x of r.ratings.resistors)
    io.out(
      `  ${x.id.padEnd(10)} ${x.worstWatts.toPrecision(3).padStart(7)} W (${x.worstCondition}), ${x.peakVolts.toFixed(0)} V peak -> ${x.buyWatts ?? '?'} W${x.buyWatts !== null ? ` (${resistorWorkingVolts(x.buyWatts)} V working)` : ''}`,
    );
  for (const t of r.ratings.tubes)
    io.out(
      `  ${t.id.padEnd(10)} ${t.type}: plate ${Math.max(t.plateWatts.warm ?? 0, t.plateWatts.maxInput ?? 0).toFixed(3)} W of ${t.plateWatts.max} W, heater-cathode ${t.heaterCathode.worstVolts.toFixed(0)} V of ${t.heaterCathode.max} V, grid circuit ${(t.gridCircuitOhms / 1e6).toPrecision(3)} M of ${(t.maxGridCircuitOhms / 1e6).toPrecision(3)} M`,
    );
  return errors > 0 ? 1 : 0;
}
