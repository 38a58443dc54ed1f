// Voicing: choose preferred values (IEC 60063 E12 / E24) for some tone-network parts so the
// network's response meets a wanted corner frequency or a target curve.
import { CircuitEngine, type EngineCircuit, type EngineElement, type OperatingPoint } from '../circuit/engine.ts';
import { designCircuit, isVolumePot, withPart, type Design, type PotPart } from '../circuit/design.ts';
import type { Netlist } from '../circuit/netlist.ts';
import { seriesValuesBetween, snapToSeries, type ESeries } from '../parts/eseries.ts';
import { drivingImpedanceOhms, identifyToneNetwork, logFrequencies, toneNetworkAc, type AcResponse } from './ac.ts';
import { linearNetwork, solveLinear } from './linear.ts';

export type VoicingTarget =
  | { readonly kind: 'corner'; readonly hertz: number; readonly response: 'low-pass' | 'high-pass' }
  | {
      readonly kind: 'curve';
      readonly points: readonly { readonly hertz: number; readonly db: number }[];
      /** Ignore a constant level offset (default true). */ readonly matchLevel?: boolean;
    };

export interface VoicingNetwork {
  readonly elementIds: readonly string[];
  readonly drivenFrom: string;
  readonly outputNode?: string;
}

export interface VoicingOptions {
  readonly series?: 'E12' | 'E24';
  /** Search this many decades either side of each present value (default 1). */
  readonly decades?: number;
  readonly sourceOhms?: number;
}

export interface VoicingResult {
  /** Chosen value per varied element (ohms or farads). */
  readonly values: Readonly<Record<string, number>>;
  /** Corner: achieved corner frequency; curve: null. */
  readonly cornerHz: number | null;
  /** Corner: achieved / wanted − 1; curve: RMS dB error over the target points. */
  readonly fitError: number;
  readonly fitErrorUnit: 'fraction' | 'dB rms';
  /** Loss at the network's best frequency in 20 Hz - 20 kHz, dB (positive = loss). */
  readonly insertionLossDb: number;
  readonly response: AcResponse;
  readonly evaluated: number;
}

/** Half-power (-3.01 dB) point relative to the response's maximum over 20 Hz - 20 kHz. */
export function corner(mag: (hz: number) => number, response: 'low-pass' | 'high-pass'): number | null {
  const f = logFrequencies(1, 200000, 241);
  const m = f.map(mag);
  let peakI = 0;
  for (let i = 1; i < m.length; i++) if (m[i]! > m[peakI]!) peakI = i;
  const level = m[peakI]! / Math.SQRT2;
  let a: number | null = null,
    b: number | null = null;
  if (response === 'low-pass') {
    for (let i = peakI; i + 1 < f.length; i++)
      if (m[i]! >= level && m[i + 1]! < level) {
        a = f[i]!;
        b = f[i + 1]!;
        break;
      }
  } else {
    for (let i = peakI; i > 0; i--)
      if (m[i]! >= level && m[i - 1]! < level) {
        a = f[i - 1]!;
        b = f[i]!;
        break;
      }
  }
  if (a === null || b === null) return null;
  for (let k = 0; k < 50; k++) {
    const c = Math.sqrt(a * b);
    const above = m[peakI]! / Math.SQRT2 <= mag(c);
    if ((response === 'low-pass') === above) a = c;
    else b = c;
  }
  return Math.sqrt(a * b);
}

/** Fit the `vary` elements (resistors or capacitors of the network) to the target from E12 / E24. */
export function fitToneNetwork(
  circuit: EngineCircuit | Netlist,
  network: VoicingNetwork,
  vary: readonly string[],
  target: VoicingTarget,
  options: VoicingOptions = {},
): VoicingResult {
  const series: ESeries = options.series ?? 'E12';
  const decades = options.decades ?? 1;
  const ids = new Set(network.elementIds);
  const chosen = (circuit.elements as readonly EngineElement[]).filter((e) => ids.has(e.id) || ids.has(e.id.replace(/\.(1|2)$/, '')));
  for (const v of vary) {
    const e = chosen.find((x) => x.id === v);
    if (!e || (e.kind !== 'resistor' && e.kind !== 'capacitor')) throw new RangeError(`voicing: ${v} is not a resistor or capacitor of the tone network`);
  }
  if (target.kind === 'corner' && !(target.hertz > 0)) throw new RangeError('voicing: corner frequency must be positive');
  if (target.kind === 'curve' && target.points.length === 0) throw new RangeError('voicing: target curve needs at least one point');
  const present = vary.map((v) => {
    const e = chosen.find((x) => x.id === v)! as Extract<EngineElement, { kind: 'resistor' | 'capacitor' }>;
    return e.kind === 'resistor' ? e.ohms : e.farads;
  });
  const candidates = present.map((x) => seriesValuesBetween(x / 10 ** decades, x * 10 ** decades, series));
  const build = (vals: readonly number[]): EngineCircuit => ({
    ground: circuit.ground,
    input: { node: network.drivenFrom, ohms: options.sourceOhms ?? 0 },
    output: { node: network.outputNode ?? circuit.output.node },
    elements: chosen.map((e) => {
      const i = vary.indexOf(e.id);
      if (i < 0) return e;
      return e.kind === 'resistor' ? { ...e, ohms: vals[i]! } : e.kind === 'capacitor' ? { ...e, farads: vals[i]! } : e;
    }),
  });
  let evaluated = 0;
  const cost = (vals: readonly number[]): { cost: number; cornerHz: number | null } => {
    evaluated++;
    const sub = build(vals);
    const net = linearNetwork(sub, { tubes: 'removed' });
    const mag = (hz: number) => {
      const v = solveLinear(net, 2 * Math.PI * hz);
      return Math.hypot(v.re[sub.output.node] ?? 0, v.im[sub.output.node] ?? 0);
    };
    if (target.kind === 'corner') {
      const fc = corner(mag, target.response);
      return { cost: fc === null ? Infinity : Math.abs(Math.log(fc / target.hertz)), cornerHz: fc };
    }
    const d = target.points.map((p) => 20 * Math.log10(Math.max(1e-20, mag(p.hertz))) - p.db);
    const off = target.matchLevel === false ? 0 : d.reduce((a, b) => a + b, 0) / d.length;
    return { cost: Math.sqrt(d.reduce((a, b) => a + (b - off) ** 2, 0) / d.length), cornerHz: null };
  };
  const total = candidates.reduce((a, c) => a * c.length, 1);
  let best = present.map((x) => snapToSeries(x, series).value);
  let bestCost = cost(best).cost;
  if (total <= 20000) {
    const idx = new Array<number>(vary.length).fill(0);
    for (let n = 0; n < total; n++) {
      let r = n;
      for (let i = 0; i < vary.length; i++) {
        idx[i] = r % candidates[i]!.length;
        r = Math.floor(r / candidates[i]!.length);
      }
      const vals = idx.map((j, i) => candidates[i]![j]!);
      const c = cost(vals).cost;
      if (c < bestCost - 1e-15) {
        bestCost = c;
        best = vals;
      }
    }
  } else {
    for (let pass = 0; pass < 6; pass++) {
      let improved = false;
      for (let i = 0; i < vary.length; i++)
        for (const x of candidates[i]!) {
          const vals = best.map((b, j) => (j === i ? x : b));
          const c = cost(vals).cost;
          if (c < bestCost - 1e-15) {
            bestCost = c;
            best = vals;
            improved = true;
          }
        }
      if (!improved) break;
    }
  }
  const final = cost(best);
  const sub = build(best);
  const response = toneNetworkAc(
    sub,
    { elementIds: sub.elements.map((e) => e.id), drivenFrom: network.drivenFrom, outputNode: sub.output.node },
    { ...(options.sourceOhms !== undefined ? { sourceOhms: options.sourceOhms } : {}) },
  );
  const values: Record<string, number> = {};
  vary.forEach((v, i) => {
    values[v] = best[i]!;
  });
  return {
    values,
    cornerHz: final.cornerHz,
    fitError: target.kind === 'corner' ? (final.cornerHz ?? NaN) / target.hertz - 1 : final.cost,
    fitErrorUnit: target.kind === 'corner' ? 'fraction' : 'dB rms',
    insertionLossDb: -Math.max(...response.magnitudeDb),
    response,
    evaluated,
  };
}

export interface ToneControlEnds {
  /** The tone pot (design part id) and the stage output impedance that drives the network. */
  readonly potId: string;
  readonly sourceOhms: number;
  /** Treble-cut corner (-3 dB below the network's peak) at each end of the control; null above 200 kHz. */
  readonly atPosition0Hz: number | null;
  readonly atPosition1Hz: number | null;
  /** Level at 10 kHz relative to 300 Hz at each end, dB (how much treble the control takes away). */
  readonly tilt0Db: number;
  readonly tilt1Db: number;
}

/**
 * The tone control's range as the circuit drives and loads it: the corner frequency and the
 * 10 kHz / 300 Hz tilt at both ends of the pot's travel. Null when the design has no tone
 * network or no pot in it other than the volume control.
 */
export function toneControlEnds(design: Design, op?: OperatingPoint): ToneControlEnds | null {
  const circuit = designCircuit(design);
  const net = identifyToneNetwork(circuit);
  if (!net) return null;
  const pot = design.parts.find((p): p is PotPart => p.kind === 'pot' && net.partIds.includes(p.id) && !isVolumePot(p, design.output.node));
  if (!pot) return null;
  const o = op ?? new CircuitEngine(circuit, 48000).operatingPoint();
  const at = (position: number) => {
    const c = designCircuit(withPart(design, { ...pot, position }));
    const n = identifyToneNetwork(c) ?? net;
    const sourceOhms = drivingImpedanceOhms(c, o, n);
    const sub: EngineCircuit = {
      ground: c.ground,
      input: { node: n.drivenFrom, ohms: sourceOhms },
      output: { node: n.outputNode },
      elements: (c.elements as readonly EngineElement[]).filter((e) => n.elementIds.includes(e.id)),
    };
    const lin = linearNetwork(sub, { tubes: 'removed' });
    const mag = (hz: number) => {
      const v = solveLinear(lin, 2 * Math.PI * hz);
      return Math.hypot(v.re[sub.output.node] ?? 0, v.im[sub.output.node] ?? 0);
    };
    return { sourceOhms, fc: corner(mag, 'low-pass'), tilt: 20 * Math.log10(mag(10000) / mag(300)) };
  };
  const a = at(0),
    b = at(1);
  return { potId: pot.id, sourceOhms: a.sourceOhms, atPosition0Hz: a.fc, atPosition1Hz: b.fc, tilt0Db: a.tilt, tilt1Db: b.tilt };
}
