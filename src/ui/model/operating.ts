// Operating-point report: each tube's figures beside its ratings, and warnings on exceedance.
// Part ratings to buy come from the worst-case sheet (worst-case.ts), not from here.
import { designCircuit, type Design } from '../../dsp/circuit/design.ts';
import { CircuitEngine, type OperatingPoint } from '../../dsp/circuit/engine.ts';
import { tubeType } from '../../dsp/tubes/library.ts';

export interface RatedFigure {
  readonly label: string;
  readonly value: number;
  readonly unit: 'V' | 'mA' | 'W';
  /** Maximum rating in the same unit, when the library has one. */
  readonly limit?: number;
  readonly exceeded: boolean;
}

export interface TubeReport {
  readonly id: string;
  readonly type: string;
  readonly figures: readonly RatedFigure[];
  readonly ratingsSource: string;
}

export interface OperatingReport {
  readonly nodes: readonly { readonly node: string; readonly volts: number }[];
  readonly tubes: readonly TubeReport[];
  readonly warnings: readonly string[];
}

const fig = (label: string, value: number, unit: RatedFigure['unit'], limit?: number): RatedFigure =>
  limit === undefined ? { label, value, unit, exceeded: false } : { label, value, unit, limit, exceeded: Math.abs(value) > limit };

/** Build the report from an operating point (pure). */
export function operatingReport(d: Design, op: OperatingPoint): OperatingReport {
  const nodes = Object.entries(op.nodes)
    .filter(([n]) => n !== '0')
    .map(([node, volts]) => ({ node, volts }))
    .sort((a, b) => a.node.localeCompare(b.node));
  const warnings: string[] = [];
  const tubes: TubeReport[] = [];
  const v = (n: string) => op.nodes[n] ?? 0;
  for (const p of d.parts) {
    if (p.kind !== 'tube') continue;
    const t = tubeType(p.type);
    const o = op.tubes[p.id];
    if (!o) continue;
    const r = t.ratings;
    const hk = (p.heaterVolts ?? 0) - v(p.nodes.cathode);
    const figures: RatedFigure[] = [
      fig('plate to cathode', o.vpk, 'V', r.plateVolts),
      fig('plate current', o.plateAmps * 1e3, 'mA'),
      fig('plate dissipation', o.plateWatts, 'W', r.plateWatts),
      fig('grid to cathode', o.vgk, 'V'),
      ...(t.kind === 'pentode' ? [fig('screen to cathode', o.vsk, 'V', r.screenVolts), fig('screen dissipation', o.screenWatts, 'W', r.screenWatts)] : []),
      fig('cathode current', o.cathodeAmps * 1e3, 'mA', r.cathodeAmps === undefined ? undefined : r.cathodeAmps * 1e3),
      fig('heater to cathode', hk, 'V', r.heaterCathodeVolts),
    ];
    for (const f of figures)
      if (f.exceeded)
        warnings.push(`${p.id} (${t.name}): ${f.label} ${f.value.toFixed(f.unit === 'W' ? 2 : 1)} ${f.unit} exceeds the ${f.limit} ${f.unit} rating`);
    // With the tubes cold at switch-on the plate sits at its supply (common practice).
    if (d.supply.volts > r.plateVolts)
      warnings.push(`${p.id} (${t.name}): B+ ${d.supply.volts} V is above the ${r.plateVolts} V plate rating, which a cold tube sees at switch-on`);
    if (o.vgk > 0) warnings.push(`${p.id}: the grid sits ${o.vgk.toFixed(2)} V above the cathode at rest (grid current flows)`);
    tubes.push({ id: p.id, type: t.name, figures, ratingsSource: r.source });
  }
  return { nodes, tubes, warnings };
}

/** Solve and report; a failure gives a one-line reason instead. */
export function computeOperatingReport(d: Design): { ok: true; op: OperatingPoint; report: OperatingReport } | { ok: false; reason: string } {
  try {
    const op = new CircuitEngine(designCircuit(d), 48000).operatingPoint();
    return { ok: true, op, report: operatingReport(d, op) };
  } catch (err) {
    return { ok: false, reason: (err as Error).message };
  }
}
