// The supply estimate applied to a design: the design's DC draw sets the estimate's load, the
// estimate's Thevenin source becomes the model's B+, and its ripple becomes a per-sample B+ EMF.
import { designCircuit, SUPPLY_ID, type Design, type PowerSupplySection } from '../circuit/design.ts';
import { CircuitEngine, type OperatingPoint } from '../circuit/engine.ts';
import { designEnvelopes } from '../tubes/library.ts';
import { estimateSupply, type HeaterLoad, type SupplyEstimate } from './supply.ts';

/** DC current drawn from the design's supply node (KCL over everything attached to it), amperes. */
export function supplyCurrentAmps(design: Design, op: OperatingPoint): number {
  const c = designCircuit(design);
  const node = design.supply.node;
  const v = (n: string) => op.nodes[n] ?? 0;
  let amps = 0;
  for (const e of c.elements) {
    if (e.kind === 'resistor' && e.nodes.includes(node)) amps += (v(node) - v(e.nodes[0] === node ? e.nodes[1] : e.nodes[0])) / e.ohms;
    else if (e.kind === 'switch' && e.closed && e.nodes.includes(node)) amps += (v(node) - v(e.nodes[0] === node ? e.nodes[1] : e.nodes[0])) / e.contactOhms;
    else if (e.kind === 'triode' || e.kind === 'pentode') {
      const t = op.tubes[e.id];
      if (!t) continue;
      if (e.nodes.plate === node) amps += t.plateAmps;
      if (e.kind === 'pentode' && e.nodes.screen === node) amps += t.screenAmps;
      if (e.nodes.grid === node) amps += t.gridAmps;
      if (e.nodes.cathode === node) amps -= t.cathodeAmps;
    }
  }
  return amps;
}

/** Heater loads of the design's tubes: one per envelope (two sections of a twin triode or a triode-pentode share one heater; tubes/library.ts designEnvelopes). */
export function heaterLoads(design: Design): HeaterLoad[] {
  return designEnvelopes(design.parts).map((e) => ({ volts: e.heaterVolts, amps: e.heaterAmps, label: `${e.type} ${e.partIds.join('+')}` }));
}

export interface DesignSupply {
  readonly estimate: SupplyEstimate;
  /** The design with its B+ taken from the estimate (volts, source ohms, filter capacitor). */
  readonly design: Design;
  readonly loadAmps: number;
  /** B+ at the supply node, unloaded (no tube current) and loaded (the design's operating point). */
  readonly unloadedVolts: number;
  readonly loadedVolts: number;
  readonly ripplePeakToPeakVolts: number;
  readonly rippleHertz: number;
  readonly iterations: number;
}

/** Estimate the design's supply (powerSupply section, or `section` given), iterating load current and B+ to agreement. */
export function designSupply(design: Design, section?: PowerSupplySection, options: { readonly mainsHertz?: 50 | 60 } = {}): DesignSupply {
  const ps = section ?? design.powerSupply;
  if (!ps) throw new RangeError('design has no "powerSupply" section (transformer, rectifier, reservoir): give one or the supply flags');
  const stages = ps.stages ?? [];
  const estimateFor = (amps: number) =>
    estimateSupply({
      secondary: ps.secondary,
      rectifier: ps.rectifier,
      mainsHertz: options.mainsHertz ?? ps.mainsHertz,
      reservoirFarads: ps.reservoirFarads,
      ...(ps.reservoirRatedVolts !== undefined ? { reservoirRatedVolts: ps.reservoirRatedVolts } : {}),
      reservoirLoadAmps: stages.length === 0 ? amps : 0,
      stages: stages.map((s, i) => ({
        droppingOhms: s.droppingOhms,
        farads: s.farads,
        loadAmps: i === stages.length - 1 ? amps : 0,
        ...(s.ratedVolts !== undefined ? { ratedVolts: s.ratedVolts } : {}),
        ...(s.label !== undefined ? { label: s.label } : {}),
      })),
      heaters: heaterLoads(design),
      ...(ps.heaterWinding ? { heaterWinding: ps.heaterWinding } : {}),
    });
  let d = design;
  let amps = supplyCurrentAmps(d, new CircuitEngine(designCircuit(d), 48000).operatingPoint());
  let est = estimateFor(amps);
  let it = 0;
  let op: OperatingPoint | null = null;
  for (; it < 12; it++) {
    const last = est.nodes[est.nodes.length - 1]!;
    d = { ...design, supply: { node: design.supply.node, volts: last.theveninVolts, ohms: Math.max(1, last.sourceOhms), filterFarads: last.capacitorFarads } };
    op = new CircuitEngine(designCircuit(d), 48000).operatingPoint();
    const next = supplyCurrentAmps(d, op);
    const done = Math.abs(next - amps) <= 1e-4 * Math.max(amps, 1e-6);
    amps = next;
    est = estimateFor(amps);
    if (done) break;
  }
  const last = est.nodes[est.nodes.length - 1]!;
  return {
    estimate: est,
    design: d,
    loadAmps: amps,
    unloadedVolts: est.unloadedVolts,
    loadedVolts: op ? (op.nodes[design.supply.node] ?? last.dcVolts) : last.dcVolts,
    ripplePeakToPeakVolts: last.ripplePeakToPeakVolts,
    rippleHertz: est.rippleHertz,
    iterations: it + 1,
  };
}

/**
 * Per-sample B+ EMF that makes the model's supply node carry the estimated ripple: each ripple
 * harmonic of the last supply node is pre-emphasised by (1 + j·w·Rs·C) of the model's own
 * source resistance and filter capacitor (the load's conductance is neglected). Hum sits at
 * the ripple frequency (2 x mains for full-wave). next() allocates nothing.
 */
export class BPlusHum {
  readonly sourceId = SUPPLY_ID;
  readonly table: Float64Array;
  private k = 0;

  constructor(supply: DesignSupply, sampleRateHz: number) {
    const est = supply.estimate;
    const node = est.nodes[est.nodes.length - 1]!;
    const rs = supply.design.supply.ohms,
      c = supply.design.supply.filterFarads;
    const emf = supply.design.supply.volts;
    // a whole number of ripple periods: 1 s holds 100 or 120 (or 50, 60) periods exactly
    const n = Math.max(1, Math.round(sampleRateHz));
    this.table = new Float64Array(n).fill(emf);
    for (const h of node.rippleHarmonics) {
      const hz = h.harmonic * est.rippleHertz;
      if (hz >= 0.45 * sampleRateHz) continue;
      const wrc = 2 * Math.PI * hz * rs * c;
      const amp = h.amplitudeVolts * Math.hypot(1, wrc),
        ph = h.phaseRadians + Math.atan(wrc);
      const w = (2 * Math.PI * hz) / sampleRateHz;
      for (let j = 0; j < n; j++) this.table[j]! += amp * Math.cos(w * j + ph);
    }
  }

  /** The EMF for the next sample, volts. */
  next(): number {
    const v = this.table[this.k]!;
    this.k = this.k + 1 === this.table.length ? 0 : this.k + 1;
    return v;
  }
}
