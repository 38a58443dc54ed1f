// Linear circuit solves shared by the analyses: complex modified nodal analysis (MNA) at one
// angular frequency (omega = 0 is DC with capacitors open). Sources with zero series resistance
// get a branch-current unknown; every node gets a tiny conductance to ground so a node that
// floats at DC has a defined (zero-current) voltage.
import type { EngineCircuit, EngineElement, OperatingPoint } from '../circuit/engine.ts';
import type { NetTube, Netlist } from '../circuit/netlist.ts';
import { newTubeCurrents, tubeCurrents } from '../tubes/registry.ts';

/** Y = siemens + j·omega·farads between a and b. */
export interface LinearAdmittance {
  readonly id: string;
  readonly a: string;
  readonly b: string;
  readonly siemens: number;
  readonly farads: number;
}
/** Current siemens·(V(cp) − V(cn)) flowing out of node `from` into node `to` through the element. */
export interface LinearVccs {
  readonly id: string;
  readonly from: string;
  readonly to: string;
  readonly cp: string;
  readonly cn: string;
  readonly siemens: number;
}
/** EMF (dcVolts at omega = 0, acVolts otherwise) behind `ohms`, plus above minus. */
export interface LinearSource {
  readonly id: string;
  readonly plus: string;
  readonly minus: string;
  readonly ohms: number;
  readonly dcVolts: number;
  readonly acVolts: number;
}

export interface LinearNetwork {
  readonly ground: string;
  readonly admittances: readonly LinearAdmittance[];
  readonly vccs: readonly LinearVccs[];
  readonly sources: readonly LinearSource[];
  /** Current injected into a node (amperes, DC solves only). */
  readonly injections?: readonly { readonly node: string; readonly amps: number }[];
}

export interface ComplexVoltages {
  readonly re: Readonly<Record<string, number>>;
  readonly im: Readonly<Record<string, number>>;
}

const GMIN_SIEMENS = 1e-12;

export class LinearSolveError extends Error {
  override name = 'LinearSolveError';
}

function nodeOrder(net: LinearNetwork): string[] {
  const names: string[] = [];
  const seen = new Set<string>([net.ground]);
  const add = (n: string) => {
    if (!seen.has(n)) {
      seen.add(n);
      names.push(n);
    }
  };
  for (const y of net.admittances) {
    add(y.a);
    add(y.b);
  }
  for (const g of net.vccs) {
    add(g.from);
    add(g.to);
    add(g.cp);
    add(g.cn);
  }
  for (const s of net.sources) {
    add(s.plus);
    add(s.minus);
  }
  for (const j of net.injections ?? []) add(j.node);
  return names;
}

/** Solve the network at angular frequency omega (rad/s). Ground is 0 V. */
export function solveLinear(net: LinearNetwork, omegaRadPerSecond: number): ComplexVoltages {
  const names = nodeOrder(net);
  const index = new Map(names.map((n, i) => [n, i]));
  const ix = (n: string) => (n === net.ground ? -1 : index.get(n)!);
  const ideal = net.sources.filter((s) => s.ohms === 0);
  const n = names.length + ideal.length;
  const ar = new Float64Array(n * n),
    ai = new Float64Array(n * n);
  const br = new Float64Array(n),
    bi = new Float64Array(n);
  const dc = omegaRadPerSecond === 0;
  const addY = (a: number, b: number, gr: number, gi: number) => {
    if (a >= 0) {
      ar[a * n + a]! += gr;
      ai[a * n + a]! += gi;
    }
    if (b >= 0) {
      ar[b * n + b]! += gr;
      ai[b * n + b]! += gi;
    }
    if (a >= 0 && b >= 0) {
      ar[a * n + b]! -= gr;
      ai[a * n + b]! -= gi;
      ar[b * n + a]! -= gr;
      ai[b * n + a]! -= gi;
    }
  };
  for (let k = 0; k < names.length; k++) ar[k * n + k]! += GMIN_SIEMENS;
  for (const y of net.admittances) addY(ix(y.a), ix(y.b), y.siemens, omegaRadPerSecond * y.farads);
  for (const g of net.vccs) {
    const f = ix(g.from),
      t = ix(g.to),
      p = ix(g.cp),
      q = ix(g.cn);
    const put = (row: number, col: number, v: number) => {
      if (row >= 0 && col >= 0) ar[row * n + col]! += v;
    };
    put(f, p, g.siemens);
    put(f, q, -g.siemens);
    put(t, p, -g.siemens);
    put(t, q, g.siemens);
  }
  let branch = names.length;
  for (const s of net.sources) {
    const emf = dc ? s.dcVolts : s.acVolts;
    const p = ix(s.plus),
      m = ix(s.minus);
    if (s.ohms > 0) {
      addY(p, m, 1 / s.ohms, 0);
      if (p >= 0) br[p]! += emf / s.ohms;
      if (m >= 0) br[m]! -= emf / s.ohms;
    } else {
      const r = branch++;
      if (p >= 0) {
        ar[p * n + r]! += 1;
        ar[r * n + p]! += 1;
      }
      if (m >= 0) {
        ar[m * n + r]! -= 1;
        ar[r * n + m]! -= 1;
      }
      br[r] = emf;
    }
  }
  if (dc)
    for (const j of net.injections ?? []) {
      const k = ix(j.node);
      if (k >= 0) br[k]! += j.amps;
    }
  complexSolve(ar, ai, br, bi, n);
  const re: Record<string, number> = { [net.ground]: 0 },
    im: Record<string, number> = { [net.ground]: 0 };
  names.forEach((name, k) => {
    re[name] = br[k]!;
    im[name] = bi[k]!;
  });
  return { re, im };
}

/** Gaussian elimination with partial pivoting on a complex system (in place; x returned in b). */
function complexSolve(ar: Float64Array, ai: Float64Array, br: Float64Array, bi: Float64Array, n: number): void {
  for (let k = 0; k < n; k++) {
    let p = k,
      best = -1;
    for (let i = k; i < n; i++) {
      const m = Math.hypot(ar[i * n + k]!, ai[i * n + k]!);
      if (m > best) {
        best = m;
        p = i;
      }
    }
    if (!(best > 1e-300)) throw new LinearSolveError(`linear solve: singular matrix at unknown ${k} (an ideal source loop or a short?)`);
    if (p !== k) {
      for (let j = 0; j < n; j++) {
        let t = ar[k * n + j]!;
        ar[k * n + j] = ar[p * n + j]!;
        ar[p * n + j] = t;
        t = ai[k * n + j]!;
        ai[k * n + j] = ai[p * n + j]!;
        ai[p * n + j] = t;
      }
      let t = br[k]!;
      br[k] = br[p]!;
      br[p] = t;
      t = bi[k]!;
      bi[k] = bi[p]!;
      bi[p] = t;
    }
    const dr = ar[k * n + k]!,
      di = ai[k * n + k]!,
      dd = dr * dr + di * di;
    for (let i = k + 1; i < n; i++) {
      const xr = ar[i * n + k]!,
        xi = ai[i * n + k]!;
      if (xr === 0 && xi === 0) continue;
      const fr = (xr * dr + xi * di) / dd,
        fi = (xi * dr - xr * di) / dd;
      for (let j = k; j < n; j++) {
        const yr = ar[k * n + j]!,
          yi = ai[k * n + j]!;
        ar[i * n + j]! -= fr * yr - fi * yi;
        ai[i * n + j]! -= fr * yi + fi * yr;
      }
      const yr = br[k]!,
        yi = bi[k]!;
      br[i]! -= fr * yr - fi * yi;
      bi[i]! -= fr * yi + fi * yr;
    }
  }
  for (let k = n - 1; k >= 0; k--) {
    let sr = br[k]!,
      si = bi[k]!;
    for (let j = k + 1; j < n; j++) {
      const yr = ar[k * n + j]!,
        yi = ai[k * n + j]!,
        xr = br[j]!,
        xi = bi[j]!;
      sr -= yr * xr - yi * xi;
      si -= yr * xi + yi * xr;
    }
    const dr = ar[k * n + k]!,
      di = ai[k * n + k]!,
      dd = dr * dr + di * di;
    br[k] = (sr * dr + si * di) / dd;
    bi[k] = (si * dr - sr * di) / dd;
  }
}

/** Small-signal conductances of one tube at its operating point (netlist-v1 equations' derivatives). */
export interface TubeSmallSignal {
  /** dIp/dVgk, siemens (transconductance gm). */
  readonly gmSiemens: number;
  /** dIp/dVpk, siemens (1 / plate resistance). */
  readonly plateSiemens: number;
  /** dIp/dVsk (pentodes), siemens. */
  readonly plateScreenSiemens: number;
  /** dIs/dVgk, dIs/dVsk (pentodes). */
  readonly screenGridSiemens: number;
  readonly screenSiemens: number;
  /** dIg/dVgk (grid-current law). */
  readonly gridSiemens: number;
  /** mu = gm · rp; rp = 1 / plateSiemens. */
  readonly mu: number;
  readonly plateOhms: number;
}

export function tubeSmallSignal(t: NetTube, vgk: number, vpk: number, vsk: number): TubeSmallSignal {
  const c = newTubeCurrents();
  tubeCurrents(t, vgk, vpk, vsk, c);
  const ip = c.plate,
    is = c.screen,
    ig = c.grid;
  return {
    gmSiemens: ip.dVgk,
    plateSiemens: ip.dVpk,
    plateScreenSiemens: t.kind === 'pentode' ? ip.dVsk : 0,
    screenGridSiemens: is.dVgk,
    screenSiemens: is.dVsk,
    gridSiemens: t.gridCurrent ? ig.dVgk : 0,
    mu: ip.dVpk > 0 ? ip.dVgk / ip.dVpk : Number.POSITIVE_INFINITY,
    plateOhms: ip.dVpk > 0 ? 1 / ip.dVpk : Number.POSITIVE_INFINITY,
  };
}

export interface LinearOptions {
  /** 'linearised' needs `op`; 'removed' leaves tube terminals unconnected (tubes cold, not conducting). */
  readonly tubes: 'linearised' | 'removed';
  readonly op?: OperatingPoint;
  /** AC EMF of the input source (default 1 V); its DC EMF is 0. */
  readonly inputAcVolts?: number;
  /** DC EMF overrides by dc-source id (e.g. the unloaded B+). */
  readonly sourceVolts?: Readonly<Record<string, number>>;
  /** AC EMF of the dc-sources (default 0: supplies are AC ground). */
  readonly sourceAcVolts?: Readonly<Record<string, number>>;
  readonly injections?: readonly { readonly node: string; readonly amps: number }[];
}

/** The circuit as a linear network: resistors, capacitors, closed switches, sources, tubes linearised or removed. */
export function linearNetwork(circuit: EngineCircuit | Netlist, options: LinearOptions): LinearNetwork {
  const admittances: LinearAdmittance[] = [];
  const vccs: LinearVccs[] = [];
  const sources: LinearSource[] = [
    { id: '<input>', plus: circuit.input.node, minus: circuit.ground, ohms: circuit.input.ohms, dcVolts: 0, acVolts: options.inputAcVolts ?? 1 },
  ];
  for (const e of circuit.elements as readonly EngineElement[]) {
    switch (e.kind) {
      case 'resistor':
        admittances.push({ id: e.id, a: e.nodes[0], b: e.nodes[1], siemens: 1 / e.ohms, farads: 0 });
        break;
      case 'capacitor':
        admittances.push({ id: e.id, a: e.nodes[0], b: e.nodes[1], siemens: 0, farads: e.farads });
        break;
      case 'switch':
        if (e.closed) admittances.push({ id: e.id, a: e.nodes[0], b: e.nodes[1], siemens: 1 / e.contactOhms, farads: 0 });
        break;
      case 'dc-source':
        sources.push({
          id: e.id,
          plus: e.nodes[0],
          minus: e.nodes[1],
          ohms: e.ohms,
          dcVolts: options.sourceVolts?.[e.id] ?? e.volts,
          acVolts: options.sourceAcVolts?.[e.id] ?? 0,
        });
        break;
      case 'triode':
      case 'pentode': {
        if (options.tubes === 'removed') break;
        const top = options.op?.tubes[e.id];
        if (!top) throw new LinearSolveError(`no operating point for tube ${e.id}`);
        const ss = tubeSmallSignal(e, top.vgk, top.vpk, top.vsk);
        const { plate: p, grid: g, cathode: k } = e.nodes;
        vccs.push({ id: `${e.id}.gm`, from: p, to: k, cp: g, cn: k, siemens: ss.gmSiemens });
        vccs.push({ id: `${e.id}.gp`, from: p, to: k, cp: p, cn: k, siemens: ss.plateSiemens });
        if (ss.gridSiemens > 0) vccs.push({ id: `${e.id}.gg`, from: g, to: k, cp: g, cn: k, siemens: ss.gridSiemens });
        if (e.kind === 'pentode') {
          const s = e.nodes.screen;
          vccs.push({ id: `${e.id}.gps`, from: p, to: k, cp: s, cn: k, siemens: ss.plateScreenSiemens });
          vccs.push({ id: `${e.id}.gsg`, from: s, to: k, cp: g, cn: k, siemens: ss.screenGridSiemens });
          vccs.push({ id: `${e.id}.gs`, from: s, to: k, cp: s, cn: k, siemens: ss.screenSiemens });
        }
        break;
      }
    }
  }
  return { ground: circuit.ground, admittances, vccs, sources, ...(options.injections ? { injections: options.injections } : {}) };
}

/** DC node voltages of the circuit with the tubes removed (cold start: heaters cold, nothing conducts). */
export function coldDcNodes(circuit: EngineCircuit | Netlist, sourceVolts?: Readonly<Record<string, number>>): Readonly<Record<string, number>> {
  return solveLinear(linearNetwork(circuit, { tubes: 'removed', ...(sourceVolts ? { sourceVolts } : {}) }), 0).re;
}

/** DC resistance between two nodes with the tubes removed and every source's EMF at zero. */
export function dcResistanceBetween(circuit: EngineCircuit | Netlist, a: string, b: string): number {
  const zero: Record<string, number> = {};
  for (const e of circuit.elements) if (e.kind === 'dc-source') zero[e.id] = 0;
  const v = solveLinear(
    linearNetwork(circuit, {
      tubes: 'removed',
      sourceVolts: zero,
      injections: [
        { node: a, amps: 1 },
        { node: b, amps: -1 },
      ],
    }),
    0,
  ).re;
  return (v[a] ?? 0) - (v[b] ?? 0);
}
