// Worst-case ratings sheet: every part's stress over warm idle (operating point), cold start
// (heaters cold, tubes not conducting: the unloaded B+ stands on everything a tube would pull
// down) and maximum input (transient render with a hard input), against what to buy.
import { designCircuit, potResistors, SUPPLY_ID, type Design } from '../circuit/design.ts';
import { CircuitEngine, type EngineCircuit, type OperatingPoint } from '../circuit/engine.ts';
import { tubeType } from '../tubes/library.ts';
import { newTubeCurrents, tubeCurrents } from '../tubes/registry.ts';
import { nextCapacitorVoltageRating, nextResistorWattage } from '../parts/ratings.ts';
import { coldDcNodes, dcResistanceBetween } from './linear.ts';
import type { Finding } from './wiring-check.ts';

export type Condition = 'warm' | 'cold' | 'max-input';

/**
 * Largest continuous working voltage of a resistor by its power size, volts (common practice;
 * figures from memory of common metal-film lines, 1/8 W to 1 W, and of metal-oxide / wirewound
 * lines above): 1/8 W 150 V, 1/4 W 250 V, 1/2 W 350 V, 1 W 500 V, 2 W 500 V, 3 W 500 V,
 * 5 W 750 V, 10 W 1000 V. A small resistor across a high voltage arcs over or drifts even when
 * it dissipates little.
 */
export const RESISTOR_WORKING_VOLTS: readonly (readonly [watts: number, volts: number])[] = [
  [0.125, 150],
  [0.25, 250],
  [0.5, 350],
  [1, 500],
  [2, 500],
  [3, 500],
  [5, 750],
  [10, 1000],
];

/** Working voltage of a resistor of this power size (the next size up when between sizes). */
export function resistorWorkingVolts(ratedWatts: number): number {
  for (const [w, v] of RESISTOR_WORKING_VOLTS) if (ratedWatts <= w * (1 + 1e-9)) return v;
  return RESISTOR_WORKING_VOLTS[RESISTOR_WORKING_VOLTS.length - 1]![1];
}

/** Smallest resistor size whose working voltage covers the peak volts, or null when none does. */
export function resistorSizeForVolts(peakVolts: number): number | null {
  for (const [w, v] of RESISTOR_WORKING_VOLTS) if (peakVolts <= v) return w;
  return null;
}

export interface RatingsOptions {
  /** Unloaded B+ EMF for the cold start (default: the design's supply EMF). */
  readonly unloadedSupplyVolts?: number;
  /** Peak of the hard test input, volts (default 2). */
  readonly maxInputVolts?: number;
  /** Test-input frequencies, hertz (default 100 and 1000). */
  readonly maxInputHz?: readonly number[];
  /** Seconds per test frequency (default 0.2). */
  readonly maxInputSeconds?: number;
  readonly sampleRateHz?: number;
  /** Derating: capacitors at 80 %, resistors at 50 % of rating (from memory). */
  readonly capacitorDerate?: number;
  readonly resistorDerate?: number;
  /** An operating point already computed for this design. */
  readonly op?: OperatingPoint;
}

export interface ByCondition {
  readonly warm: number | null;
  readonly cold: number;
  readonly maxInput: number | null;
}

export interface CapacitorRating {
  readonly id: string;
  readonly farads: number;
  readonly polarized: boolean;
  /** |voltage| across the part. */
  readonly volts: ByCondition;
  readonly worstVolts: number;
  readonly worstCondition: Condition;
  /** Smallest common rating with worst ≤ derate × rating; null when none fits. */
  readonly buyVolts: number | null;
  readonly ratedVolts: number | null;
}

export interface ResistorRating {
  readonly id: string;
  readonly ohms: number;
  /** Average power (the max-input figure is the mean over the render's second half). */
  readonly watts: ByCondition;
  readonly worstWatts: number;
  readonly worstCondition: Condition;
  readonly peakVolts: number;
  /** Size to buy: the larger of what the power needs (derated) and what the peak voltage needs. */
  readonly buyWatts: number | null;
  /** Size the dissipation alone needs (derated), and the size the peak voltage alone needs. */
  readonly buyForPowerWatts: number | null;
  readonly buyForVoltsWatts: number | null;
  /** Working voltage of the size to buy (RESISTOR_WORKING_VOLTS). */
  readonly buyWorkingVolts: number | null;
  readonly ratedWatts: number | null;
}

export interface TubeRating {
  readonly id: string;
  readonly type: string;
  readonly plateWatts: { readonly warm: number | null; readonly maxInput: number | null; readonly max: number };
  readonly plateVolts: ByCondition & { readonly max: number };
  readonly screenWatts: { readonly warm: number | null; readonly maxInput: number | null; readonly max: number } | null;
  readonly screenVolts: (ByCondition & { readonly max: number }) | null;
  readonly cathodeAmps: { readonly warm: number | null; readonly maxInput: number | null; readonly max: number | null };
  readonly heaterCathode: {
    readonly heaterVolts: number;
    /** Lowest and highest cathode voltage over all conditions. */
    readonly cathodeVoltsRange: readonly [number, number];
    readonly worstVolts: number;
    readonly worstCondition: Condition;
    readonly max: number;
    /** Heater elevations that keep |Vk − Vh| within the maximum in every condition; null if none. */
    readonly fixElevationVolts: readonly [number, number] | null;
  };
  readonly gridCircuitOhms: number;
  readonly maxGridCircuitOhms: number;
  /** Cathode returned straight to ground, grid biased by grid current through a large resistor. */
  readonly gridLeakBias: boolean;
}

export interface RatingsSheet {
  readonly conditions: {
    readonly warmOk: boolean;
    readonly coldSupplyVolts: number;
    readonly maxInput: {
      readonly peakVolts: number;
      readonly frequenciesHz: readonly number[];
      readonly seconds: number;
      readonly sampleRateHz: number;
    } | null;
  };
  readonly capacitors: readonly CapacitorRating[];
  readonly resistors: readonly ResistorRating[];
  readonly tubes: readonly TubeRating[];
  /** Heater elevation range that suits every tube at once (one heater winding), or null. */
  readonly commonHeaterElevationVolts: readonly [number, number] | null;
  readonly findings: readonly Finding[];
}

interface Peaks {
  min: Map<string, number>;
  max: Map<string, number>;
  capPeak: Map<string, number>;
  resWatts: Map<string, number>;
  resPeak: Map<string, number>;
  tube: Map<string, { pw: number; sw: number; ik: number; vpk: number; vsk: number; kmin: number; kmax: number }>;
}

/** Hard-input transient: peak voltages and mean dissipations over the second half of each tone. */
function maxInputRun(circuit: EngineCircuit, peakVolts: number, hz: readonly number[], seconds: number, fs: number): Peaks {
  const e = new CircuitEngine(circuit, fs);
  const names = e.nodeNames;
  e.setProbes(names);
  const idx = new Map(names.map((n, i) => [n, i]));
  const at = (n: string) => (n === circuit.ground ? -1 : (idx.get(n) ?? -1));
  const P: Peaks = { min: new Map(), max: new Map(), capPeak: new Map(), resWatts: new Map(), resPeak: new Map(), tube: new Map() };
  const lo = new Float64Array(names.length).fill(Infinity),
    hi = new Float64Array(names.length).fill(-Infinity);
  const two = circuit.elements.flatMap((el) =>
    el.kind === 'resistor' || el.kind === 'capacitor' || (el.kind === 'switch' && el.closed) ? [{ el, a: at(el.nodes[0]), b: at(el.nodes[1]) }] : [],
  );
  const capPk = new Float64Array(two.length),
    resPk = new Float64Array(two.length),
    resW = new Float64Array(two.length);
  const tubes = circuit.elements.flatMap((el) =>
    el.kind === 'triode' || el.kind === 'pentode'
      ? [{ el, p: at(el.nodes.plate), g: at(el.nodes.grid), k: at(el.nodes.cathode), s: el.kind === 'pentode' ? at(el.nodes.screen) : -1 }]
      : [],
  );
  const tw = tubes.map(() => ({ pw: 0, sw: 0, ik: 0, vpk: -Infinity, vsk: -Infinity, kmin: Infinity, kmax: -Infinity }));
  const cur = newTubeCurrents(),
    ip = cur.plate,
    is = cur.screen,
    ig = cur.grid;
  // probeValues is computed when read: read it after every sample
  let pv = e.probeValues;
  const V = (i: number) => (i < 0 ? 0 : pv[i]!);
  let avgCount = 0;
  for (const f of hz) {
    e.resetToOperatingPoint();
    const n = Math.round(seconds * fs);
    for (let j = 0; j < n; j++) {
      e.processSample(peakVolts * Math.sin((2 * Math.PI * f * j) / fs));
      pv = e.probeValues;
      const avg = j >= n / 2;
      if (avg) avgCount++;
      for (let k = 0; k < names.length; k++) {
        const x = pv[k]!;
        if (x < lo[k]!) lo[k] = x;
        if (x > hi[k]!) hi[k] = x;
      }
      for (let q = 0; q < two.length; q++) {
        const t = two[q]!,
          dv = V(t.a) - V(t.b),
          adv = Math.abs(dv);
        if (t.el.kind === 'capacitor') {
          if (adv > capPk[q]!) capPk[q] = adv;
        } else {
          if (adv > resPk[q]!) resPk[q] = adv;
          if (avg) resW[q]! += (dv * dv) / (t.el.kind === 'resistor' ? t.el.ohms : t.el.contactOhms);
        }
      }
      for (let q = 0; q < tubes.length; q++) {
        const t = tubes[q]!,
          w = tw[q]!;
        const vk = V(t.k),
          vgk = V(t.g) - vk,
          vpk = V(t.p) - vk,
          vsk = t.s >= 0 ? V(t.s) - vk : 0;
        tubeCurrents(t.el, vgk, vpk, vsk, cur);
        if (avg) {
          w.pw += ip.amps * vpk;
          w.sw += is.amps * vsk;
          w.ik += ip.amps + is.amps + ig.amps;
        }
        if (vpk > w.vpk) w.vpk = vpk;
        if (vsk > w.vsk) w.vsk = vsk;
        if (vk < w.kmin) w.kmin = vk;
        if (vk > w.kmax) w.kmax = vk;
      }
    }
  }
  names.forEach((nm, k) => {
    P.min.set(nm, lo[k]!);
    P.max.set(nm, hi[k]!);
  });
  P.min.set(circuit.ground, 0);
  P.max.set(circuit.ground, 0);
  two.forEach((t, q) => {
    if (t.el.kind === 'capacitor') P.capPeak.set(t.el.id, capPk[q]!);
    else {
      P.resPeak.set(t.el.id, resPk[q]!);
      P.resWatts.set(t.el.id, resW[q]! / Math.max(1, avgCount));
    }
  });
  tubes.forEach((t, q) => {
    const w = tw[q]!;
    P.tube.set(t.el.id, { ...w, pw: w.pw / Math.max(1, avgCount), sw: w.sw / Math.max(1, avgCount), ik: w.ik / Math.max(1, avgCount) });
  });
  return P;
}

function worst(b: ByCondition): { v: number; c: Condition } {
  let v = b.cold,
    c: Condition = 'cold';
  if (b.warm !== null && b.warm > v) {
    v = b.warm;
    c = 'warm';
  }
  if (b.maxInput !== null && b.maxInput > v) {
    v = b.maxInput;
    c = 'max-input';
  }
  return { v, c };
}

const r3 = (x: number) => +x.toPrecision(3);
const conditionText = (c: Condition) =>
  c === 'cold' ? 'at cold start (tubes not yet conducting, unloaded B+)' : c === 'warm' ? 'at warm idle' : 'under maximum input';

/** The worst-case ratings sheet of a design, with findings for every rating exceeded. */
export function ratingsSheet(design: Design, options: RatingsOptions = {}): RatingsSheet {
  const circuit = designCircuit(design);
  const fs = options.sampleRateHz ?? 48000;
  const capDerate = options.capacitorDerate ?? 0.8,
    resDerate = options.resistorDerate ?? 0.5;
  const findings: Finding[] = [];
  let op: OperatingPoint | null = options.op ?? null;
  if (!op) {
    try {
      op = new CircuitEngine(circuit, fs).operatingPoint();
    } catch (err) {
      findings.push({
        severity: 'error',
        code: 'no-operating-point',
        parts: [],
        nodes: [],
        message: `no DC operating point: ${(err as Error).message}; only the cold-start figures are given`,
      });
    }
  }
  const coldVolts = options.unloadedSupplyVolts ?? design.supply.volts;
  const cold = coldDcNodes(circuit, { [SUPPLY_ID]: coldVolts });
  const peakIn = options.maxInputVolts ?? 2,
    hzList = options.maxInputHz ?? [100, 1000],
    secs = options.maxInputSeconds ?? 0.2;
  let mx: Peaks | null = null;
  if (op) {
    try {
      mx = maxInputRun(circuit, peakIn, hzList, secs, fs);
    } catch (err) {
      findings.push({ severity: 'warning', code: 'max-input-failed', parts: [], nodes: [], message: `maximum-input render failed: ${(err as Error).message}` });
    }
  }
  const warmV = (n: string) => (op ? (op.nodes[n] ?? 0) : null);
  const coldV = (n: string) => cold[n] ?? 0;

  const capacitors: CapacitorRating[] = [];
  const resistors: ResistorRating[] = [];
  const capParts: { id: string; nodes: readonly [string, string]; farads: number; polarized: boolean; ratedVolts: number | null }[] = [
    ...(design.supply.filterFarads > 0
      ? [{ id: 'B+.filter', nodes: [design.supply.node, circuit.ground] as const, farads: design.supply.filterFarads, polarized: true, ratedVolts: null }]
      : []),
    ...design.parts.flatMap((p) =>
      p.kind === 'capacitor' ? [{ id: p.id, nodes: p.nodes, farads: p.farads, polarized: p.polarized ?? false, ratedVolts: p.ratedVolts ?? null }] : [],
    ),
  ];
  for (const p of capParts) {
    const [a, b] = p.nodes;
    const w = warmV(a) !== null ? Math.abs(warmV(a)! - warmV(b)!) : null;
    const volts: ByCondition = { warm: w, cold: Math.abs(coldV(a) - coldV(b)), maxInput: mx ? (mx.capPeak.get(p.id) ?? null) : null };
    const { v, c } = worst(volts);
    const buy = nextCapacitorVoltageRating(v, { derate: capDerate });
    capacitors.push({
      id: p.id,
      farads: p.farads,
      polarized: p.polarized,
      volts,
      worstVolts: v,
      worstCondition: c,
      buyVolts: buy.ok ? buy.rating : null,
      ratedVolts: p.ratedVolts,
    });
    if (!buy.ok)
      findings.push({
        severity: 'error',
        code: 'capacitor-voltage',
        parts: [p.id],
        nodes: [a, b],
        message: `${p.id} sees ${r3(v)} V ${conditionText(c)}: ${buy.reason}`,
      });
    if (p.ratedVolts !== null) {
      if (v > p.ratedVolts)
        findings.push({
          severity: 'error',
          code: 'capacitor-voltage',
          parts: [p.id],
          nodes: [a, b],
          message: `${p.id} is rated ${p.ratedVolts} V but sees ${r3(v)} V ${conditionText(c)}${c === 'cold' && w !== null ? ` (only ${r3(w)} V warm)` : ''}: it will fail, possibly violently; buy ${buy.ok ? `${buy.rating} V` : 'a higher rating'}`,
        });
      else if (v > capDerate * p.ratedVolts)
        findings.push({
          severity: 'warning',
          code: 'capacitor-voltage',
          parts: [p.id],
          nodes: [a, b],
          message: `${p.id} rated ${p.ratedVolts} V sees ${r3(v)} V ${conditionText(c)}, over ${capDerate * 100} % of its rating: short life; buy ${buy.ok ? `${buy.rating} V` : 'a higher rating'}`,
        });
    }
  }
  const resParts: { id: string; elements: { id: string; nodes: readonly [string, string]; ohms: number }[]; ohms: number; ratedWatts: number | null }[] = [];
  for (const p of design.parts) {
    if (p.kind === 'resistor')
      resParts.push({ id: p.id, elements: [{ id: p.id, nodes: p.nodes, ohms: p.ohms }], ohms: p.ohms, ratedWatts: p.ratedWatts ?? null });
    else if (p.kind === 'pot') {
      const r = potResistors(p);
      const els = [{ id: `${p.id}.1`, nodes: [p.nodes[0], p.nodes[1]] as const, ohms: r.upperOhms }];
      if (p.nodes[1] !== p.nodes[2]) els.push({ id: `${p.id}.2`, nodes: [p.nodes[1], p.nodes[2]] as const, ohms: r.lowerOhms });
      resParts.push({ id: p.id, elements: els, ohms: p.ohms, ratedWatts: p.ratedWatts ?? null });
    }
  }
  for (const p of resParts) {
    let ww: number | null = op ? 0 : null,
      wc = 0,
      wm: number | null = mx ? 0 : null,
      pk = 0;
    for (const e of p.elements) {
      const [a, b] = e.nodes;
      if (ww !== null) ww += (warmV(a)! - warmV(b)!) ** 2 / e.ohms;
      wc += (coldV(a) - coldV(b)) ** 2 / e.ohms;
      if (wm !== null && mx) {
        wm += mx.resWatts.get(e.id) ?? 0;
        pk = Math.max(pk, mx.resPeak.get(e.id) ?? 0);
      }
      pk = Math.max(pk, Math.abs(coldV(a) - coldV(b)), op ? Math.abs(warmV(a)! - warmV(b)!) : 0);
    }
    const watts: ByCondition = { warm: ww, cold: wc, maxInput: wm };
    const { v, c } = worst(watts);
    const buy = nextResistorWattage(v, { derate: resDerate });
    const forVolts = resistorSizeForVolts(pk);
    const buyWatts = buy.ok && forVolts !== null ? Math.max(buy.rating, forVolts) : null;
    resistors.push({
      id: p.id,
      ohms: p.ohms,
      watts,
      worstWatts: v,
      worstCondition: c,
      peakVolts: pk,
      buyWatts,
      buyForPowerWatts: buy.ok ? buy.rating : null,
      buyForVoltsWatts: forVolts,
      buyWorkingVolts: buyWatts !== null ? resistorWorkingVolts(buyWatts) : null,
      ratedWatts: p.ratedWatts,
    });
    const nodes = [...new Set(p.elements.flatMap((e) => [...e.nodes]))];
    if (!buy.ok)
      findings.push({
        severity: 'error',
        code: 'resistor-power',
        parts: [p.id],
        nodes,
        message: `${p.id} dissipates ${r3(v)} W ${conditionText(c)}: ${buy.reason}`,
      });
    if (forVolts === null)
      findings.push({
        severity: 'error',
        code: 'resistor-voltage',
        parts: [p.id],
        nodes,
        message: `${p.id} sees ${r3(pk)} V peak, above the working voltage of any common resistor: use resistors in series`,
      });
    else if (p.ratedWatts !== null && pk > resistorWorkingVolts(p.ratedWatts))
      findings.push({
        severity: 'error',
        code: 'resistor-voltage',
        parts: [p.id],
        nodes,
        message: `${p.id} is a ${p.ratedWatts} W part (about ${resistorWorkingVolts(p.ratedWatts)} V working voltage) but sees ${r3(pk)} V peak: it can arc over or drift; buy ${forVolts} W or larger (${resistorWorkingVolts(forVolts)} V)`,
      });
    if (p.ratedWatts !== null) {
      if (v > p.ratedWatts)
        findings.push({
          severity: 'error',
          code: 'resistor-power',
          parts: [p.id],
          nodes,
          message: `${p.id} is rated ${p.ratedWatts} W but dissipates ${r3(v)} W ${conditionText(c)}: it will overheat and drift or burn; buy ${buy.ok ? `${buy.rating} W` : 'a larger part'}`,
        });
      else if (v > resDerate * p.ratedWatts)
        findings.push({
          severity: 'warning',
          code: 'resistor-power',
          parts: [p.id],
          nodes,
          message: `${p.id} rated ${p.ratedWatts} W dissipates ${r3(v)} W ${conditionText(c)}, over ${resDerate * 100} % of its rating: it runs hot; buy ${buy.ok ? `${buy.rating} W` : 'a larger part'}`,
        });
    }
  }

  const tubes: TubeRating[] = [];
  const elevations: [number, number][] = [];
  for (const p of design.parts) {
    if (p.kind !== 'tube') continue;
    const t = tubeType(p.type),
      R = t.ratings;
    const o = op?.tubes[p.id];
    const m = mx?.tube.get(p.id);
    const { plate, grid, cathode } = p.nodes;
    const screen = p.nodes.screen;
    const plateVolts = { warm: o ? o.vpk : null, cold: coldV(plate) - coldV(cathode), maxInput: m ? m.vpk : null, max: R.plateVolts };
    const screenVolts = screen
      ? { warm: o ? o.vsk : null, cold: coldV(screen) - coldV(cathode), maxInput: m ? m.vsk : null, max: R.screenVolts ?? Infinity }
      : null;
    const vh = p.heaterVolts ?? 0;
    const ks: [number, Condition][] = [[coldV(cathode), 'cold']];
    if (op) ks.push([warmV(cathode)!, 'warm']);
    if (mx) ks.push([mx.min.get(cathode) ?? 0, 'max-input'], [mx.max.get(cathode) ?? 0, 'max-input']);
    let kmin = Infinity,
      kmax = -Infinity,
      hkWorst = 0,
      hkCond: Condition = 'cold';
    for (const [k, c] of ks) {
      kmin = Math.min(kmin, k);
      kmax = Math.max(kmax, k);
      if (Math.abs(k - vh) > hkWorst) {
        hkWorst = Math.abs(k - vh);
        hkCond = c;
      }
    }
    const hkMax = R.heaterCathodeVolts;
    const fix: [number, number] | null = kmax - hkMax <= kmin + hkMax ? [kmax - hkMax, kmin + hkMax] : null;
    if (fix) elevations.push(fix);
    const gridOhms = dcResistanceBetween(circuit, grid, cathode);
    const cathodeToGround = cathode === circuit.ground ? 0 : dcResistanceBetween(circuit, cathode, circuit.ground);
    const gridLeak = cathodeToGround < 100 && gridOhms >= 1e6;
    const tr: TubeRating = {
      id: p.id,
      type: p.type,
      plateWatts: { warm: o ? o.plateWatts : null, maxInput: m ? m.pw : null, max: R.plateWatts },
      plateVolts,
      screenWatts: screen ? { warm: o ? o.screenWatts : null, maxInput: m ? m.sw : null, max: R.screenWatts ?? Infinity } : null,
      screenVolts,
      cathodeAmps: { warm: o ? o.cathodeAmps : null, maxInput: m ? m.ik : null, max: R.cathodeAmps ?? null },
      heaterCathode: { heaterVolts: vh, cathodeVoltsRange: [kmin, kmax], worstVolts: hkWorst, worstCondition: hkCond, max: hkMax, fixElevationVolts: fix },
      gridCircuitOhms: gridOhms,
      maxGridCircuitOhms: R.gridCircuitOhms,
      gridLeakBias: gridLeak,
    };
    tubes.push(tr);
    const pwMax = Math.max(tr.plateWatts.warm ?? 0, tr.plateWatts.maxInput ?? 0);
    if (pwMax > R.plateWatts)
      findings.push({
        severity: 'error',
        code: 'plate-dissipation',
        parts: [p.id],
        nodes: [plate],
        message: `${p.id} (${p.type}) plate dissipates ${r3(pwMax)} W, over its ${R.plateWatts} W maximum: the plate overheats and the tube wears out fast; raise the plate or cathode resistor`,
      });
    const pvHot = Math.max(plateVolts.warm ?? 0, plateVolts.maxInput ?? 0);
    if (pvHot > R.plateVolts)
      findings.push({
        severity: 'error',
        code: 'plate-voltage',
        parts: [p.id],
        nodes: [plate, cathode],
        message: `${p.id} (${p.type}) plate-to-cathode reaches ${r3(pvHot)} V ${plateVolts.maxInput !== null && plateVolts.maxInput >= (plateVolts.warm ?? 0) ? 'under maximum input' : 'at warm idle'}, over its ${R.plateVolts} V maximum: risk of internal arcing; lower B+`,
      });
    else if (plateVolts.cold > R.plateVolts)
      findings.push({
        severity: 'note',
        code: 'plate-voltage-cold',
        parts: [p.id],
        nodes: [plate],
        message: `${p.id} plate stands at ${r3(plateVolts.cold)} V at cold start, above the ${R.plateVolts} V hot maximum: data sheets allow a higher cold (zero-current) plate voltage; check yours`,
      });
    if (screen && tr.screenWatts && screenVolts) {
      const swMax = Math.max(tr.screenWatts.warm ?? 0, tr.screenWatts.maxInput ?? 0);
      if (swMax > tr.screenWatts.max)
        findings.push({
          severity: 'error',
          code: 'screen-dissipation',
          parts: [p.id],
          nodes: [screen],
          message: `${p.id} (${p.type}) screen dissipates ${r3(swMax)} W, over its ${tr.screenWatts.max} W maximum: the screen grid overheats and warps; raise the screen resistor`,
        });
      const svHot = Math.max(screenVolts.warm ?? 0, screenVolts.maxInput ?? 0);
      if (svHot > screenVolts.max)
        findings.push({
          severity: 'error',
          code: 'screen-voltage',
          parts: [p.id],
          nodes: [screen, cathode],
          message: `${p.id} (${p.type}) screen-to-cathode reaches ${r3(svHot)} V, over its ${screenVolts.max} V maximum; raise the screen resistor or lower its supply`,
        });
      else if (screenVolts.cold > screenVolts.max)
        findings.push({
          severity: 'note',
          code: 'screen-voltage-cold',
          parts: [p.id],
          nodes: [screen],
          message: `${p.id} screen stands at ${r3(screenVolts.cold)} V at cold start, above the ${screenVolts.max} V hot maximum: data sheets allow a higher cold screen voltage; check yours`,
        });
    }
    const ik = Math.max(tr.cathodeAmps.warm ?? 0, tr.cathodeAmps.maxInput ?? 0);
    if (R.cathodeAmps !== undefined && ik > R.cathodeAmps)
      findings.push({
        severity: 'error',
        code: 'cathode-current',
        parts: [p.id],
        nodes: [cathode],
        message: `${p.id} (${p.type}) cathode current ${r3(ik * 1e3)} mA exceeds its ${R.cathodeAmps * 1e3} mA maximum: the cathode coating is stripped; raise the cathode resistor`,
      });
    if (hkWorst > hkMax) {
      const fixText = fix
        ? `elevate the heater to between ${Math.ceil(fix[0])} and ${Math.floor(fix[1])} V (e.g. ${Math.round((fix[0] + fix[1]) / 2)} V from a divider off B+)`
        : `no single heater elevation covers the ${r3(kmin)}..${r3(kmax)} V cathode swing: use a separate heater winding`;
      findings.push({
        severity: 'error',
        code: 'heater-cathode',
        parts: [p.id],
        nodes: [cathode],
        message: `${p.id} (${p.type}) cathode sits ${r3(hkWorst)} V from its heater (${vh} V) ${conditionText(hkCond)}, over the ${hkMax} V heater-cathode maximum: the insulation breaks down and hums or shorts; ${fixText}`,
      });
    }
    if (gridOhms > R.gridCircuitOhms && gridOhms < 1e11) {
      if (gridLeak)
        findings.push({
          severity: 'note',
          code: 'grid-leak-bias',
          parts: [p.id, ...design.parts.filter((q) => q.kind === 'resistor' && q.nodes.includes(grid)).map((q) => q.id)],
          nodes: [grid],
          message: `${p.id} grid circuit is ${r3(gridOhms / 1e6)} M (data-sheet maximum ${r3(R.gridCircuitOhms / 1e6)} M for cathode bias): grid-leak bias needs it large on purpose; the bias then depends on the tube sample`,
        });
      else
        findings.push({
          severity: 'error',
          code: 'grid-circuit-resistance',
          parts: [p.id],
          nodes: [grid, cathode],
          message: `${p.id} (${p.type}) grid-to-cathode DC resistance is ${r3(gridOhms / 1e6)} M, over its ${r3(R.gridCircuitOhms / 1e6)} M maximum: grid current and gas make the bias creep and can run the tube away; use a smaller grid resistor`,
        });
    }
  }
  let common: [number, number] | null = elevations.length === tubes.length && tubes.length > 0 ? [-Infinity, Infinity] : null;
  for (const [lo, hi] of elevations) if (common) common = [Math.max(common[0], lo), Math.min(common[1], hi)];
  if (common && common[0] > common[1]) common = null;
  return {
    conditions: {
      warmOk: op !== null,
      coldSupplyVolts: coldVolts,
      maxInput: mx ? { peakVolts: peakIn, frequenciesHz: hzList, seconds: secs, sampleRateHz: fs } : null,
    },
    capacitors,
    resistors,
    tubes,
    commonHeaterElevationVolts: common,
    findings,
  };
}
