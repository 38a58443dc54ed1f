// valvewright op (--design X | --netlist X) [--set PART.FIELD=VALUE ...] [--json]: DC operating point.
import { CircuitEngine } from '../../dsp/circuit/engine.ts';
import { parseArgs } from '../args.ts';
import { CIRCUIT_OPTIONS, loadCircuitSource, sourceNotes } from '../circuit-load.ts';
import type { CommandIO } from '../main.ts';

export const OP_USAGE = 'usage: valvewright op (--design FILE|TEMPLATE | --netlist FILE) [--set PART.FIELD=VALUE ...] [--json]';

export async function runOp(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['json'], [...CIRCUIT_OPTIONS]);
  const loaded = await loadCircuitSource(a, { wiring: true, usage: OP_USAGE });
  for (const l of sourceNotes(loaded)) io.err(l);
  const op = new CircuitEngine(loaded.circuit, 48000).operatingPoint();
  const tubes = Object.fromEntries(
    Object.entries(op.tubes).map(([id, t]) => [
      id,
      {
        plateAmps: t.plateAmps,
        plateWatts: t.plateWatts,
        gridAmps: t.gridAmps,
        screenAmps: t.screenAmps,
      },
    ]),
  );
  const m = loaded.design?.supply;
  // the model's B+ source (the supply section's estimate where the design has one)
  const supply =
    loaded.fromNetlist || !m
      ? null
      : {
          node: m.node,
          emfVolts: m.volts,
          sourceOhms: m.ohms,
          filterFarads: m.filterFarads,
          nodeVolts: op.nodes[m.node] ?? null,
          fromPowerSupply: loaded.supply !== null,
        };
  if (a.options.has('json')) {
    io.out(JSON.stringify({ nodes: op.nodes, tubes, ...(supply ? { supply } : {}) }, null, 2));
    return 0;
  }
  io.out(`operating point of ${loaded.label}`);
  if (supply)
    io.out(
      `  B+ ${supply.nodeVolts?.toFixed(1) ?? '?'} V at node ${supply.node} (${supply.fromPowerSupply ? 'power-supply estimate' : 'fixed supply'}: ${supply.emfVolts.toFixed(1)} V behind ${supply.sourceOhms.toFixed(0)} ohms)`,
    );
  for (const [name, v] of Object.entries(op.nodes)) io.out(`  node ${name.padEnd(10)} ${v.toFixed(3).padStart(10)} V`);
  for (const [id, t] of Object.entries(op.tubes)) {
    io.out(
      `  ${id}: plate ${(t.plateAmps * 1e3).toFixed(3)} mA, ${t.plateWatts.toFixed(3)} W, Vgk ${t.vgk.toFixed(3)} V, Vpk ${t.vpk.toFixed(1)} V, grid ${(t.gridAmps * 1e6).toFixed(3)} uA${t.kind === 'pentode' ? `, screen ${(t.screenAmps * 1e3).toFixed(3)} mA` : ''}`,
    );
  }
  return 0;
}
