// valvewright supply --design X [--json] [--secondary-volts V --secondary-amps A --rectifier R --mains 50|60 --reservoir-farads F]
import { designSupply } from '../../dsp/analysis/design-supply.ts';
import type { PowerSupplySection } from '../../dsp/circuit/design.ts';
import type { RectifierTopology } from '../../dsp/analysis/supply.ts';
import { CliError, optNumber, optString, parseArgs, type ParsedArgs } from '../args.ts';
import { loadDesignSource } from '../circuit-load.ts';
import type { CommandIO } from '../main.ts';

export const SUPPLY_USAGE =
  'usage: valvewright supply --design FILE|TEMPLATE [--set PART.FIELD=VALUE ...] [--json] [--secondary-volts V --secondary-amps A [--rectifier bridge|full-wave-ct|half-wave] [--mains 50|60] [--reservoir-farads F] [--heater-volts V --heater-amps A]]';

function sectionFromFlags(a: ParsedArgs): PowerSupplySection | undefined {
  if (!a.options.has('secondary-volts')) return undefined;
  const rms = optNumber(a, 'secondary-volts', 0, (x) => (x > 0 && x < 2000 ? null : 'must be between 0 and 2000 V RMS'));
  if (!a.options.has('secondary-amps')) throw new CliError("--secondary-volts needs --secondary-amps (the winding's rated RMS current)");
  const amps = optNumber(a, 'secondary-amps', 0, (x) => (x > 0 && x < 100 ? null : 'must be between 0 and 100 A'));
  const topo = optString(a, 'rectifier') ?? 'bridge';
  if (!['bridge', 'full-wave-ct', 'half-wave'].includes(topo)) throw new CliError(`--rectifier must be bridge, full-wave-ct or half-wave (got "${topo}")`);
  const mains = optNumber(a, 'mains', 50, (x) => (x === 50 || x === 60 ? null : 'must be 50 or 60'));
  const res = optNumber(a, 'reservoir-farads', 47e-6, (x) => (x > 0 && x < 1 ? null : 'must be between 0 and 1 F'));
  const hv = optNumber(a, 'heater-volts', 0),
    ha = optNumber(a, 'heater-amps', 0);
  return {
    secondary: { rmsVolts: rms, ratedAmps: amps },
    rectifier: { topology: topo as RectifierTopology, diode: 'silicon' },
    mainsHertz: mains as 50 | 60,
    reservoirFarads: res,
    ...(hv > 0 && ha > 0 ? { heaterWinding: { volts: hv, amps: ha } } : {}),
  };
}

export async function runSupply(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(
    argv,
    ['json'],
    ['design', 'set', 'secondary-volts', 'secondary-amps', 'rectifier', 'mains', 'reservoir-farads', 'heater-volts', 'heater-amps'],
  );
  const design = (await loadDesignSource(a, { wiring: false, usage: SUPPLY_USAGE })).given;
  const section = sectionFromFlags(a);
  if (!section && !design.powerSupply)
    throw new CliError(`design "${design.name}" has no "powerSupply" section: add one or give --secondary-volts and --secondary-amps`);
  const s = designSupply(design, section);
  const e = s.estimate;
  const out = {
    unloadedVolts: s.unloadedVolts,
    loadedVolts: s.loadedVolts,
    loadAmps: s.loadAmps,
    ripplePeakToPeakVolts: s.ripplePeakToPeakVolts,
    rippleHertz: s.rippleHertz,
    formulaRippleVolts: e.formulaRippleVolts,
    modelSupply: s.design.supply,
    windingRmsAmps: e.windingRmsAmps,
    heater: e.heater,
    nodes: e.nodes.map(({ rippleHarmonics: _h, ...rest }) => rest),
    warnings: e.warnings,
    notes: e.notes,
    iterations: s.iterations,
  };
  // a FAIL (heater budget, a capacitor rated under the unloaded B+, a collapsing supply) exits 1
  const failed = (e.heater !== null && !e.heater.pass) || e.warnings.some((w) => /overloaded|too low|collapses|heater voltage|dropping resistor/.test(w));
  if (a.options.has('json')) {
    io.out(JSON.stringify({ ...out, pass: !failed }, null, 2));
    return failed ? 1 : 0;
  }
  io.out(`supply of ${design.name}: unloaded ${s.unloadedVolts.toFixed(1)} V, loaded ${s.loadedVolts.toFixed(1)} V at ${(s.loadAmps * 1e3).toFixed(2)} mA`);
  io.out(
    `  ripple ${s.ripplePeakToPeakVolts.toPrecision(3)} V p-p at ${s.rippleHertz} Hz on the supply node (reservoir by I/(2fC): ${e.formulaRippleVolts.toPrecision(3)} V)`,
  );
  io.out(`  model B+: ${s.design.supply.volts.toFixed(1)} V behind ${s.design.supply.ohms.toFixed(0)} ohms`);
  if (e.heater)
    io.out(`  heaters: ${e.heater.totalAmps.toFixed(2)} A of ${e.heater.windingAmps} A at ${e.heater.windingVolts} V${e.heater.pass ? '' : ' (FAIL)'}`);
  for (const w of e.warnings) io.out(`  warning: ${w}`);
  io.out(failed ? 'FAIL: see the warnings above' : 'pass');
  return failed ? 1 : 0;
}
