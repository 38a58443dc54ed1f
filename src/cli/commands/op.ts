// valvewright op (--design X | --netlist X) [--json]: DC operating point.
import { CircuitEngine } from '../../dsp/circuit/engine.ts';
import { loadCircuitArg, parseArgs } from '../args.ts';
import type { CommandIO } from '../main.ts';

export async function runOp(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['json'], ['design', 'netlist']);
  const loaded = await loadCircuitArg(a);
  const op = new CircuitEngine(loaded.circuit, 48000).operatingPoint();
  const tubes = Object.fromEntries(Object.entries(op.tubes).map(([id, t]) => [id, {
    plateAmps: t.plateAmps, plateWatts: t.plateWatts, gridAmps: t.gridAmps, screenAmps: t.screenAmps,
  }]));
  if (a.options.has('json')) {
    io.out(JSON.stringify({ nodes: op.nodes, tubes }, null, 2));
    return 0;
  }
  io.out(`operating point of ${loaded.label}`);
  for (const [name, v] of Object.entries(op.nodes)) io.out(`  node ${name.padEnd(10)} ${v.toFixed(3).padStart(10)} V`);
  for (const [id, t] of Object.entries(op.tubes)) {
    io.out(`  ${id}: plate ${(t.plateAmps * 1e3).toFixed(3)} mA, ${(t.plateWatts).toFixed(3)} W, Vgk ${t.vgk.toFixed(3)} V, Vpk ${t.vpk.toFixed(1)} V, grid ${(t.gridAmps * 1e6).toFixed(3)} uA${t.kind === 'pentode' ? `, screen ${(t.screenAmps * 1e3).toFixed(3)} mA` : ''}`);
  }
  return 0;
}
