// Operating-point report: each tube's figures beside its ratings, and warnings on exceedance.
import { designCircuit, type Design } from '../../dsp/circuit/design.ts';
import { CircuitEngine, type OperatingPoint } from '../../dsp/circuit/engine.ts';
import { tubeType } from '../../dsp/tubes/library.ts';
import { nextCapacitorVoltageRating, nextResistorWattage } from '../../dsp/parts/ratings.ts';

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

export interface PartStress {
  readonly id: string;
  /** DC volts across a capacitor, or DC watts in a resistor. */
  readonly dcVolts?: number;
  readonly watts?: number;
  /** Suggested common rating ("63 V", "0.25 W") or a reason. */
  readonly suggestion: string;
}

export interface OperatingReport {
  readonly nodes: readonly { readonly node: string; readonly volts: number }[];
  readonly tubes: readonly TubeReport[];
  readonly parts: readonly PartStress[];
  readonly warnings: readonly string[];
}

const fig = (label: string, value: number, unit: RatedFigure['unit'], limit?: number): RatedFigure =>
  limit === undefined ? { label, value, unit, exceeded: false } : { label, value, unit, limit, exceeded: Math.abs(value) > limit };

/** Build the report from an operating point (pure). */
export function operatingReport(d: Design, op: OperatingPoint): OperatingReport {
  const nodes = Object.entries(op.nodes).filter(([n]) => n !== '0').map(([node, volts]) => ({ node, volts })).sort((a, b) => a.node.localeCompare(b.node));
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
    for (const f of figures) if (f.exceeded) warnings.push(`${p.id} (${t.name}): ${f.label} ${f.value.toFixed(f.unit === 'W' ? 2 : 1)} ${f.unit} exceeds the ${f.limit} ${f.unit} rating`);
    // With the tubes cold at switch-on the plate sits at its supply (common practice).
    if (d.supply.volts > r.plateVolts) warnings.push(`${p.id} (${t.name}): B+ ${d.supply.volts} V is above the ${r.plateVolts} V plate rating, which a cold tube sees at switch-on`);
    if (o.vgk > 0) warnings.push(`${p.id}: the grid sits ${o.vgk.toFixed(2)} V above the cathode at rest (grid current flows)`);
    tubes.push({ id: p.id, type: t.name, figures, ratingsSource: r.source });
  }
  const parts: PartStress[] = [];
  for (const p of d.parts) {
    if (p.kind === 'capacitor') {
      // Cold-tube worst case: any capacitor may see up to the full B+ (check-values.md, via ratings.ts).
      const dc = v(p.nodes[0]) - v(p.nodes[1]);
      const worst = Math.max(Math.abs(dc), touchesSupply(d, p.nodes) ? d.supply.volts : Math.abs(dc));
      const r = nextCapacitorVoltageRating(worst);
      parts.push({ id: p.id, dcVolts: dc, suggestion: r.ok ? `${r.rating} V part or higher` : r.reason });
    } else if (p.kind === 'resistor') {
      const dv = v(p.nodes[0]) - v(p.nodes[1]);
      const watts = (dv * dv) / p.ohms;
      const r = nextResistorWattage(watts);
      parts.push({ id: p.id, watts, suggestion: r.ok ? `${r.rating} W part or larger` : r.reason });
    }
  }
  return { nodes, tubes, parts, warnings };
}

/** A capacitor on a node that is at B+ when the tubes draw nothing (plate, screen or supply side). */
function touchesSupply(d: Design, nodes: readonly string[]): boolean {
  const hot = new Set<string>([d.supply.node]);
  let grew = true;
  while (grew) {
    grew = false;
    for (const p of d.parts) {
      if (p.kind !== 'resistor') continue;
      const [a, b] = p.nodes;
      if (hot.has(a) && !hot.has(b) && b !== '0') { hot.add(b); grew = true; }
      else if (hot.has(b) && !hot.has(a) && a !== '0') { hot.add(a); grew = true; }
    }
  }
  return nodes.some((n) => hot.has(n));
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
