// Small-signal AC analysis: the circuit linearised at its DC operating point (tube conductances
// from the netlist-v1 equations' analytic derivatives), complex MNA over frequency.
import { CircuitEngine, type EngineCircuit, type EngineElement, type OperatingPoint } from '../circuit/engine.ts';
import type { Netlist } from '../circuit/netlist.ts';
import { linearNetwork, solveLinear, type LinearNetwork } from './linear.ts';

export interface AcResponse {
  readonly frequenciesHz: readonly number[];
  readonly magnitudeDb: readonly number[];
  readonly phaseDeg: readonly number[];
  /** Complex transfer output / input EMF. */
  readonly re: readonly number[];
  readonly im: readonly number[];
}

/** Log-spaced frequencies from startHz to stopHz inclusive (default 20 Hz - 20 kHz, 61 points). */
export function logFrequencies(startHz = 20, stopHz = 20000, points = 61): number[] {
  if (!(startHz > 0 && stopHz > startHz)) throw new RangeError(`frequencies: need 0 < start < stop (got ${startHz}, ${stopHz})`);
  if (!(Number.isInteger(points) && points >= 2 && points <= 10000)) throw new RangeError(`frequencies: points must be an integer 2..10000 (got ${points})`);
  const out: number[] = [];
  for (let k = 0; k < points; k++) out.push(startHz * Math.pow(stopHz / startHz, k / (points - 1)));
  return out;
}

/** Sweep a linear network from its '<input>' source (or any AC sources) to outputNode. */
export function sweep(net: LinearNetwork, outputNode: string, frequenciesHz: readonly number[], inputNode?: string): AcResponse {
  const re: number[] = [],
    im: number[] = [],
    mag: number[] = [],
    ph: number[] = [];
  for (const f of frequenciesHz) {
    const v = solveLinear(net, 2 * Math.PI * f);
    let r = v.re[outputNode] ?? 0,
      i = v.im[outputNode] ?? 0;
    if (inputNode !== undefined) {
      // transfer relative to a node voltage instead of the source EMF
      const ar = v.re[inputNode] ?? 0,
        ai = v.im[inputNode] ?? 0,
        d = ar * ar + ai * ai;
      if (d > 0) {
        const nr = (r * ar + i * ai) / d,
          ni = (i * ar - r * ai) / d;
        r = nr;
        i = ni;
      }
    }
    re.push(r);
    im.push(i);
    const m = Math.hypot(r, i);
    mag.push(m > 0 ? 20 * Math.log10(m) : -400);
    ph.push((Math.atan2(i, r) * 180) / Math.PI);
  }
  return { frequenciesHz: [...frequenciesHz], magnitudeDb: mag, phaseDeg: ph, re, im };
}

function hasTubes(c: EngineCircuit | Netlist): boolean {
  return c.elements.some((e) => e.kind === 'triode' || e.kind === 'pentode');
}

/** Whole circuit: input source EMF to output node, linearised at `op` (computed when not given). */
export function acAnalysis(
  circuit: EngineCircuit | Netlist,
  options: { readonly op?: OperatingPoint; readonly frequenciesHz?: readonly number[] } = {},
): AcResponse {
  const op = options.op ?? (hasTubes(circuit) ? new CircuitEngine(circuit, 48000).operatingPoint() : undefined);
  const net = linearNetwork(circuit, { tubes: 'linearised', ...(op ? { op } : {}) });
  return sweep(net, circuit.output.node, options.frequenciesHz ?? logFrequencies());
}

/** Gain magnitude (input EMF to output) at one frequency, volts per volt. */
export function gainAt(circuit: EngineCircuit | Netlist, op: OperatingPoint | undefined, hertz: number): number {
  const r = acAnalysis(circuit, { ...(op ? { op } : {}), frequenciesHz: [hertz] });
  return Math.hypot(r.re[0]!, r.im[0]!);
}

export interface ToneNetwork {
  /** The tube plate that drives it. */
  readonly drivenFrom: string;
  readonly plateOf?: string;
  /** Element ids (engine level: pots appear as id.1 / id.2). */
  readonly elementIds: readonly string[];
  /** Design-level part ids (pots folded back). */
  readonly partIds: readonly string[];
  readonly outputNode: string;
}

const designId = (id: string) => id.replace(/\.(1|2)$/, '');

function tubeTerminals(c: EngineCircuit | Netlist): Set<string> {
  const s = new Set<string>();
  for (const e of c.elements) if (e.kind === 'triode' || e.kind === 'pentode') for (const n of Object.values(e.nodes)) s.add(n);
  return s;
}

function passiveTwoTerminal(e: EngineElement): e is Extract<EngineElement, { kind: 'resistor' | 'capacitor' | 'switch' }> {
  return e.kind === 'resistor' || e.kind === 'capacitor' || (e.kind === 'switch' && e.closed);
}

/**
 * The tone network: the passive part between the last tube plate's coupling capacitor and the
 * output. Found by walking from each plate through one capacitor into passive parts only (not
 * through ground, tube terminals or sources) until the output is reached. Null when none.
 */
export function identifyToneNetwork(circuit: EngineCircuit | Netlist): ToneNetwork | null {
  const terminals = tubeTerminals(circuit);
  const sourceNodes = new Set<string>();
  for (const e of circuit.elements)
    if (e.kind === 'dc-source') {
      sourceNodes.add(e.nodes[0]);
      sourceNodes.add(e.nodes[1]);
    }
  const passive = (circuit.elements as readonly EngineElement[]).filter(passiveTwoTerminal);
  for (const t of circuit.elements) {
    if (t.kind !== 'triode' && t.kind !== 'pentode') continue;
    const plate = t.nodes.plate;
    for (const c of passive) {
      if (c.kind !== 'capacitor' || !c.nodes.includes(plate)) continue;
      const start = c.nodes[0] === plate ? c.nodes[1] : c.nodes[0];
      if (start === circuit.ground || terminals.has(start) || sourceNodes.has(start)) continue;
      const region = new Set<string>([start]);
      const queue = [start];
      const used = new Set<string>([c.id]);
      while (queue.length) {
        const n = queue.pop()!;
        for (const e of passive) {
          if (e.id === c.id || !e.nodes.includes(n)) continue;
          used.add(e.id);
          const other = e.nodes[0] === n ? e.nodes[1] : e.nodes[0];
          if (other === circuit.ground || other === plate || region.has(other)) continue;
          if (terminals.has(other) || sourceNodes.has(other)) {
            used.clear();
            region.clear();
            break;
          }
          region.add(other);
          queue.push(other);
        }
        if (region.size === 0) break;
      }
      if (region.has(circuit.output.node)) {
        const elementIds = [...used];
        return { drivenFrom: plate, plateOf: t.id, elementIds, partIds: [...new Set(elementIds.map(designId))], outputNode: circuit.output.node };
      }
    }
  }
  return null;
}

/**
 * The tone network alone, driven by an ideal source (or one of sourceOhms) at its input node,
 * loaded as in the circuit. `network` may be identified or given as a part list.
 */
export function toneNetworkAc(
  circuit: EngineCircuit | Netlist,
  network: { readonly elementIds: readonly string[]; readonly drivenFrom: string; readonly outputNode?: string },
  options: { readonly frequenciesHz?: readonly number[]; readonly sourceOhms?: number } = {},
): AcResponse {
  const ids = new Set(network.elementIds);
  const chosen = circuit.elements.filter((e) => ids.has(e.id) || ids.has(designId(e.id)));
  if (chosen.length === 0) throw new RangeError('tone network: none of the given parts is in the circuit');
  for (const e of chosen)
    if (!passiveTwoTerminal(e as EngineElement)) throw new RangeError(`tone network: ${e.id} is not a resistor, capacitor or closed switch`);
  const sub: EngineCircuit = {
    ground: circuit.ground,
    input: { node: network.drivenFrom, ohms: options.sourceOhms ?? 0 },
    output: { node: network.outputNode ?? circuit.output.node },
    elements: chosen as EngineElement[],
  };
  return sweep(linearNetwork(sub, { tubes: 'removed' }), sub.output.node, options.frequenciesHz ?? logFrequencies());
}

/**
 * Output impedance of the stage that drives a tone network (magnitude at `hertz`, ohms): the
 * linearised circuit with the network disconnected, input EMF on, solved open and with a test
 * resistor from the driving node to ground (Thevenin: Z = Rt·(Voc/Vl − 1)).
 */
export function drivingImpedanceOhms(
  circuit: EngineCircuit | Netlist,
  op: OperatingPoint,
  network: { readonly elementIds: readonly string[]; readonly drivenFrom: string },
  hertz = 1000,
): number {
  const ids = new Set(network.elementIds);
  const rest = {
    ...circuit,
    elements: (circuit.elements as readonly EngineElement[]).filter((e) => !(ids.has(e.id) || ids.has(designId(e.id)))),
  } as EngineCircuit;
  const w = 2 * Math.PI * hertz;
  const open = linearNetwork(rest, { tubes: 'linearised', op });
  const testOhms = 10e3;
  const loaded: LinearNetwork = {
    ...open,
    admittances: [...open.admittances, { id: '<test>', a: network.drivenFrom, b: circuit.ground, siemens: 1 / testOhms, farads: 0 }],
  };
  const vo = solveLinear(open, w),
    vl = solveLinear(loaded, w);
  const n = network.drivenFrom;
  const or = vo.re[n] ?? 0,
    oi = vo.im[n] ?? 0,
    lr = vl.re[n] ?? 0,
    li = vl.im[n] ?? 0;
  const d = lr * lr + li * li;
  if (!(d > 0)) return 0;
  // Voc / Vl − 1, complex
  const qr = (or * lr + oi * li) / d - 1,
    qi = (oi * lr - or * li) / d;
  return testOhms * Math.hypot(qr, qi);
}

/**
 * The tone network as the circuit drives and loads it: driven from the driving stage's output
 * impedance (drivingImpedanceOhms), loaded by everything in the network (volume pot, output load).
 */
export function toneNetworkInCircuit(
  circuit: EngineCircuit | Netlist,
  op: OperatingPoint,
  network: { readonly elementIds: readonly string[]; readonly drivenFrom: string; readonly outputNode?: string },
  frequenciesHz?: readonly number[],
): { readonly sourceOhms: number; readonly response: AcResponse } {
  const sourceOhms = drivingImpedanceOhms(circuit, op, network);
  return { sourceOhms, response: toneNetworkAc(circuit, network, { sourceOhms, ...(frequenciesHz ? { frequenciesHz } : {}) }) };
}
