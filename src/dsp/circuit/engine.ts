// Circuit engine: compiles a netlist into a wave-digital model whose leaves are the capacitors
// (trapezoidal / bilinear one-ports, Fettweis 1986 "Wave digital filters: theory and practice",
// b[n] = a[n-1]) and the sources (resistive voltage sources, b = EMF), with all resistors and
// every tube port at one nonlinear root (see wdf/root-network.ts and wdf/newton-root.ts).
// All nonlinear ports are solved together, so direct-coupled stages need no unit delay.
import { LinearNetworkCompiler, type Branch, type RootMatrices } from '../wdf/root-network.ts';
import { NewtonRoot, type RootDevice } from '../wdf/newton-root.ts';
import { RootAverager, type AveragingOptions } from '../wdf/averaged-root.ts';
import { GridLawLimiter, PlateLawLimiter, type StepLimiter } from '../wdf/junction-limit.ts';
import type { PentodeDevice, TriodeDevice, TubeFunctions } from '../tubes/devices.ts';
import { tubeDevice } from '../tubes/registry.ts';
import { compileLinearStage1, compileLinearStage2, type LinearStage1, type LinearStage2 } from './linear-kernel.ts';
import type { NetCapacitor, NetElement, NetTube, Netlist } from './netlist.ts';

/** A switch is an engine element (a netlist writes it as a resistor, or leaves it out when open). */
export interface EngineSwitch {
  readonly id: string;
  readonly kind: 'switch';
  readonly nodes: readonly [string, string];
  readonly closed: boolean;
  readonly contactOhms: number;
}
/**
 * How a capacitor is discretised. 'trapezoidal' (default, the bilinear transform of the WDF
 * literature: no damping, frequency-warped but exact in shape) suits every capacitor whose time
 * constant in the circuit is long against the sample period. A picofarad capacitance on a
 * node of tens of kilohms is stiff (tau ~ 0.1-10 us against 21 us at 48 kHz): the trapezoidal
 * rule maps such a mode to z ~ -1 and it rings at Nyquist, with overshoots beyond B+ next to
 * a clipping tube (measured: 305 V on a 241 V plate at 1x). 'bdf2' (second-order backward
 * differentiation, i_n = C (3 v_n - 4 v_{n-1} + v_{n-2}) / (2T); Hairer & Wanner, "Solving
 * Ordinary Differential Equations II", ch. V.1, from memory) is second-order accurate and
 * L-stable: stiff modes decay at once. Designs use it for tube interelectrode capacitances.
 */
export type CapacitorIntegration = 'trapezoidal' | 'bdf2';
export interface EngineCapacitor extends NetCapacitor {
  readonly integration?: CapacitorIntegration;
}
export type EngineElement = Exclude<NetElement, NetCapacitor> | EngineCapacitor | EngineSwitch;
export interface EngineCircuit extends Omit<Netlist, 'elements' | 'schema'> {
  readonly elements: readonly EngineElement[];
}

export interface TubeOperatingPoint {
  readonly kind: 'triode' | 'pentode';
  readonly plateAmps: number;
  readonly plateWatts: number;
  readonly gridAmps: number;
  readonly screenAmps: number;
  readonly screenWatts: number;
  readonly cathodeAmps: number;
  readonly vgk: number;
  readonly vpk: number;
  readonly vsk: number;
}

export interface OperatingPoint {
  readonly nodes: Readonly<Record<string, number>>;
  readonly tubes: Readonly<Record<string, TubeOperatingPoint>>;
  /** Newton iterations used over all supply steps. */
  readonly iterations: number;
  readonly supplySteps: number;
}

export class OperatingPointError extends Error {
  override name = 'OperatingPointError';
}

export interface ValueUpdate {
  readonly id: string;
  /** ohms (resistor), farads (capacitor), volts (dc-source EMF) */
  readonly value: number;
}

/** Engine construction options (all optional; the defaults are the exact netlist-v1 model). */
export interface EngineOptions {
  /** 'exact' (default): the netlist-v1 equations; 'table': tabulated tube laws (tubes/tables.ts). */
  readonly tubeFunctions?: TubeFunctions;
  /**
   * 'averaged' (default): the root's currents are their mean over each sample step, first-order
   * antiderivative anti-aliasing by quadrature (wdf/averaged-root.ts); 'off': the end-point
   * currents (the plain discretisation, for comparisons).
   */
  readonly antialiasing?: Antialiasing;
  /** Quadrature tolerance and depth of 'averaged' (default DEFAULT_AVERAGING). */
  readonly averaging?: AveragingOptions;
  /**
   * Compiled values and operating point from another engine of the same circuit, rate and
   * options (circuit/plan.ts): the constructor copies them instead of compiling the matrices and
   * solving the DC point, so an engine can be built cheaply on the audio thread.
   */
  readonly prepared?: PreparedEngineState;
}

/** What a built engine hands to a twin (plain data: typed arrays and records). */
export interface PreparedEngineState {
  /** Transient matrices for the engine's values at construction (RootMatrices layout). */
  readonly matrices: RootMatrices;
  readonly operatingPoint: OperatingPoint;
  /** The DC root's port voltages at the operating point. */
  readonly rootVolts: Float64Array;
}

export type Antialiasing = 'averaged' | 'off';

/** Counters of the transient solver since the engine was built (CircuitEngine.solverStats). */
export interface SolverStats {
  /** Samples solved. */
  readonly solves: number;
  /** Newton iterations (device evaluations) over all of them. */
  readonly iterations: number;
  /** Samples that needed the fallback (continuation, or the averager's end-point currents). */
  readonly fallbacks: number;
  /** Samples that still failed: their state was held at the last converged sample. */
  readonly failures: number;
  /** Interior solves of the averaged root. */
  readonly interiorSolves: number;
}

const GMIN_SIEMENS = 1e-12;
/**
 * With antialiasing 'averaged', capacitors below this are integrated by BDF2 whatever the
 * netlist says. Such a capacitance (a stray or interelectrode one, or a small bright cap) on
 * tens of kilohms is stiff: the trapezoidal rule leaves it an undamped mode near z = -1, and
 * the averaged root's half-sample delay inside that loop makes it grow. Measured: the
 * triode-triode template as a netlist (trapezoidal 1.6 pF) at rest, 1x, oscillated at Nyquist
 * with 2 V at the output within 1500 samples; with BDF2 it stays within 1e-9 V. 100 pF on
 * 1 M is still 100 us, five sample periods at 48 kHz, so larger capacitors keep the
 * trapezoidal rule. (Common practice for the threshold; no source.)
 */
export const STIFF_BELOW_FARADS = 100e-12;
/**
 * An open switch is its insulation and leakage, 100 M (order of magnitude of a contact's and a
 * board's leakage; common practice, no source), not an open circuit. A cut-off tube still passes
 * the grid law's constant term ig0 (80 nA for the 12AX7 fit) into its cathode, so a lifted
 * cathode with no DC return but gmin would have to float to ig0 / gmin = 80 kV and the DC solve
 * fails; with 100 M it settles at a few volts, cut off, as a real lifted cathode does.
 * (The netlist-v1 form still leaves an open switch out, as the spec says.)
 */
const OPEN_SWITCH_SIEMENS = 1e-8;
// quadraticAccept: one device evaluation per sample when the Newton step is small (see newton-root.ts).
// homotopyDepth: a sample whose solve fails is re-solved by continuation from the last sample's
// solution in steps down to 1/256 of the way (NewtonRoot.continueFrom).
const TRANSIENT = { toleranceVolts: 1e-5, maxIterations: 40, extrapolate: true, quadraticAccept: true, homotopyDepth: 8 } as const;
const DC = { toleranceVolts: 1e-11, maxIterations: 200 } as const;

/**
 * Element values the engine simulates. The per-sample maps come from one dense nodal solve in
 * double precision: conductances that meet at a node must stay within about 1e12 of each other
 * or the maps lose all accuracy (measured: a 22 nF coupling capacitor times 1e14, 5 pOhm at
 * 48 kHz against hundreds of kilohms, put 1e6 V on the output). These bounds are decades beyond
 * any tube circuit (common practice), so a value outside them is a typing or unit error.
 */
export const VALUE_RANGES = {
  ohms: [1e-3, 1e12],
  farads: [1e-15, 10],
  /** |EMF| of a dc-source. */
  volts: 1e5,
} as const;

export class ValueRangeError extends Error {
  override name = 'ValueRangeError';
}

function checkValueRanges(circuit: EngineCircuit | Netlist): void {
  const [rLo, rHi] = VALUE_RANGES.ohms,
    [cLo, cHi] = VALUE_RANGES.farads;
  const ohms = (what: string, x: number, zeroOk: boolean) => {
    if (zeroOk && x === 0) return;
    if (!(x >= rLo && x <= rHi))
      throw new ValueRangeError(`${what}: ${x} ohms is outside the range the engine simulates (${rLo} to ${rHi} ohms${zeroOk ? ', or 0' : ''})`);
  };
  ohms('input', circuit.input.ohms, true);
  for (const e of circuit.elements) {
    if (e.kind === 'resistor') ohms(e.id, e.ohms, false);
    else if (e.kind === 'switch') ohms(e.id, e.contactOhms, false);
    else if (e.kind === 'capacitor') {
      if (!(e.farads >= cLo && e.farads <= cHi))
        throw new ValueRangeError(`${e.id}: ${e.farads} farads is outside the range the engine simulates (${cLo} to ${cHi} F)`);
    } else if (e.kind === 'dc-source') {
      if (!(Math.abs(e.volts) <= VALUE_RANGES.volts))
        throw new ValueRangeError(`${e.id}: ${e.volts} volts is beyond the ${VALUE_RANGES.volts} V the engine simulates`);
      ohms(e.id, e.ohms, true);
    }
  }
}

/**
 * Junction limiting for a tube's root ports (wdf/junction-limit.ts): its grid law's exponential
 * tail and its Koren plate law's softplus tail. `offset`: its grid port; plate next, screen after.
 */
function tubeLimiters(e: NetTube, offset: number): StepLimiter[] {
  const out: StepLimiter[] = [];
  const gl = e.gridCurrent;
  if (gl && gl.name === 'dempwolf-zolzer' && gl.gg > 0) out.push(new GridLawLimiter(offset, gl.cg * gl.xi));
  else if (gl && gl.name === 'initial-velocity') {
    // Vt = k T / q (Boltzmann constant and elementary charge, exact in SI since 2019)
    out.push(new GridLawLimiter(offset, 1 / ((1.380649e-23 * gl.cathodeKelvin) / 1.602176634e-19), gl.onsetVolts));
  }
  const mo = e.model;
  if (e.kind === 'pentode' && e.model.name === 'koren-pentode') out.push(new PlateLawLimiter(offset, offset + 2, true, mo.kp, mo.mu, mo.kvb, mo.ex));
  else if (e.kind === 'triode' && e.model.name === 'koren-triode') out.push(new PlateLawLimiter(offset, offset + 1, false, mo.kp, mo.mu, mo.kvb, mo.ex));
  return out;
}

interface TubeSlot {
  readonly el: NetTube;
  readonly device: TriodeDevice | PentodeDevice;
  readonly offset: number;
}

/** Where an element's value lives: its kind and its index in the engine's value arrays. */
interface ElementSlot {
  readonly kind: EngineElement['kind'];
  /** resistor, switch: conductance index; capacitor: capacitor index; dc-source: source index; tube: -1 */
  readonly index: number;
}

export class CircuitEngine {
  readonly nodeNames: readonly string[];
  private sampleRateHz: number;
  private readonly circuit: EngineCircuit;
  private readonly nodeIndex: Map<string, number>;
  /** Element id -> kind and value index (built once; value changes look up here, allocation-free). */
  private readonly slots = new Map<string, ElementSlot>();
  private readonly caps: { id: string; branch: Branch; bdf2: boolean }[] = [];
  private readonly sources: { id: string; branch: Branch; ohms: number }[] = [];
  private readonly sourceIndex = new Map<string, number>();
  private readonly tubes: TubeSlot[] = [];
  private readonly tubeById = new Map<string, TubeSlot>();
  // Element values, indexed like the branch lists (changed in place by setValues / setSwitch).
  /** Resistors and switches (in element order): ohms (a switch: its contact resistance). */
  private readonly condOhms: Float64Array;
  /** Their conductances as stamped: 1/ohms, 0 for an open switch. */
  private readonly condSiemens: Float64Array;
  private readonly capFarads: Float64Array;
  /** Source EMFs (index 0 is the input, set per sample). */
  private readonly sourceVolts: Float64Array;
  /** Transient wave-port resistances: capacitors (T/2C or 2T/3C), then the sources. */
  private readonly trOhms: Float64Array;
  private readonly dcOhms: Float64Array;
  private readonly trCompiler: LinearNetworkCompiler;
  private readonly dcCompiler: LinearNetworkCompiler;
  private readonly nlPorts: Branch[] = [];
  private readonly devices: RootDevice[] = [];
  /** Junction limiting of the tubes' exponential tails (indexed by root port). */
  private readonly limiters: StepLimiter[] = [];
  private readonly inputLeaf: number;
  private readonly outputNode: number;
  /** Transient matrices: the same arrays for the engine's life, recompiled in place. */
  private readonly tr: RootMatrices;
  private readonly dc: RootMatrices;
  private dcValid = false;
  private readonly root: NewtonRoot;
  /** Mean of the root's currents over each step (null when antialiasing is off). */
  private readonly averager: RootAverager | null;
  /** What the linear part integrates: the averager's mean, or the root's end-point currents. */
  private readonly rootCurrents: Float64Array;
  private readonly dcRoot: NewtonRoot;
  // state and scratch (allocated once)
  private readonly capV: Float64Array;
  private readonly capI: Float64Array;
  private readonly capR: Float64Array;
  private readonly capVPrev: Float64Array;
  private readonly u: Float64Array;
  private readonly p: Float64Array;
  private readonly invCapR: Float64Array;
  // Per-sample maps over x = [capacitor waves (nc), input EMF, root currents (m)], dense (the
  // generated kernels of linear-kernel.ts), with the constant-source (B+) part folded into *Const.
  private readonly x: Float64Array;
  /** Dense m × (nc+1) map from [w; vin] to the root's open-circuit voltages. */
  private readonly Pd: Float64Array;
  private readonly pConst: Float64Array;
  /** Dense nc × (nc+1+m) map from [w; vin; i] to the capacitor voltages. */
  private readonly Cd: Float64Array;
  private readonly cConst: Float64Array;
  /** Dense (nc+1+m) map from [w; vin; i] to the output voltage. */
  private readonly Od: Float64Array;
  private readonly stage1: LinearStage1;
  private readonly stage2: LinearStage2;
  /** [0]: the output's constant (dc-source) part, in an array for the generated stage 2. */
  private readonly oConst = new Float64Array(1);
  /** [0] input, [1] output of processSample (see stepFrom). */
  private readonly io = new Float64Array(2);
  /** [0]: the output of the last converged sample (held when a sample fails). */
  private readonly lastOut = new Float64Array(1);
  private constDirty = true;
  private probeRows: Int32Array = new Int32Array(0);
  private probeBuf: Float64Array = new Float64Array(0);
  /** True when a sample has been processed since probeBuf was last computed. */
  private probesStale = false;
  /** No sample processed since the last reset to the operating point. */
  private atRest = true;
  private op: OperatingPoint | null = null;

  constructor(circuit: EngineCircuit | Netlist, sampleRateHz: number, options: EngineOptions = {}) {
    const tubeFunctions: TubeFunctions = options.tubeFunctions ?? 'exact';
    if (!(sampleRateHz > 0 && Number.isFinite(sampleRateHz))) throw new Error(`sample rate must be positive (got ${sampleRateHz})`);
    checkValueRanges(circuit);
    this.circuit = circuit;
    this.sampleRateHz = sampleRateHz;
    // later elements with the same id replace earlier ones (in the first one's place)
    const unique = new Map<string, EngineElement>(circuit.elements.map((e) => [e.id, e]));
    const names: string[] = [];
    this.nodeIndex = new Map();
    const idx = (name: string): number => {
      if (name === circuit.ground) return -1;
      let i = this.nodeIndex.get(name);
      if (i === undefined) {
        i = names.length;
        names.push(name);
        this.nodeIndex.set(name, i);
      }
      return i;
    };
    const capFarads: number[] = [];
    const averaged = (options.antialiasing ?? 'averaged') === 'averaged';
    for (const e of circuit.elements) {
      if (e.kind === 'capacitor') {
        const bdf2 = ('integration' in e && e.integration === 'bdf2') || (averaged && e.farads < STIFF_BELOW_FARADS);
        this.caps.push({ id: e.id, branch: { a: idx(e.nodes[0]), b: idx(e.nodes[1]) }, bdf2 });
        capFarads.push(e.farads);
      }
    }
    this.inputLeaf = this.caps.length;
    this.sources.push({ id: '<input>', branch: { a: idx(circuit.input.node), b: -1 }, ohms: circuit.input.ohms });
    const sourceVolts: number[] = [0];
    for (const e of circuit.elements) {
      if (e.kind === 'dc-source') {
        this.sources.push({ id: e.id, branch: { a: idx(e.nodes[0]), b: idx(e.nodes[1]) }, ohms: e.ohms });
        sourceVolts.push(e.volts);
      } else if (e.kind === 'resistor' || e.kind === 'switch') {
        idx(e.nodes[0]);
        idx(e.nodes[1]);
      } else if (e.kind === 'triode' || e.kind === 'pentode') {
        const k = idx(e.nodes.cathode);
        const offset = this.nlPorts.length;
        this.nlPorts.push({ a: idx(e.nodes.grid), b: k }, { a: idx(e.nodes.plate), b: k });
        if (e.kind === 'pentode') this.nlPorts.push({ a: idx(e.nodes.screen), b: k });
        const device = tubeDevice(e, tubeFunctions);
        this.limiters.push(...tubeLimiters(e, offset));
        const slot = { el: e, device, offset };
        this.tubes.push(slot);
        if (!this.tubeById.has(e.id)) this.tubeById.set(e.id, slot);
        this.devices.push(device);
      }
    }
    this.outputNode = idx(circuit.output.node);
    this.nodeNames = names;
    this.capFarads = Float64Array.from(capFarads);
    this.sourceVolts = Float64Array.from(sourceVolts);
    this.sources.forEach((src, j) => {
      if (!this.sourceIndex.has(src.id)) this.sourceIndex.set(src.id, j);
    });
    // conductances in element order: resistors, and switches (open: OPEN_SWITCH_SIEMENS)
    const condBranches: Branch[] = [],
      condOhms: number[] = [],
      condSiemens: number[] = [];
    const node = (n: string) => this.nodeIndex.get(n) ?? -1;
    for (const e of unique.values()) {
      let index = -1;
      if (e.kind === 'resistor' || e.kind === 'switch') {
        index = condBranches.length;
        condBranches.push({ a: node(e.nodes[0]), b: node(e.nodes[1]) });
        const ohms = e.kind === 'resistor' ? e.ohms : e.contactOhms;
        condOhms.push(ohms);
        condSiemens.push(e.kind === 'switch' && !e.closed ? OPEN_SWITCH_SIEMENS : 1 / ohms);
      } else if (e.kind === 'capacitor') index = this.caps.findIndex((c) => c.id === e.id);
      else if (e.kind === 'dc-source') index = this.sources.findIndex((x) => x.id === e.id);
      this.slots.set(e.id, { kind: e.kind, index });
    }
    this.condOhms = Float64Array.from(condOhms);
    this.condSiemens = Float64Array.from(condSiemens);
    const nu = this.caps.length + this.sources.length;
    const sourcePorts = this.sources.map((x) => x.branch);
    const topology = (wavePorts: readonly Branch[], ohms: Float64Array) => ({
      nodeCount: names.length,
      conductances: condBranches,
      wavePorts,
      idealPorts: Array.from(ohms, (r) => r === 0),
      nonlinearPorts: this.nlPorts,
      gminSiemens: GMIN_SIEMENS,
    });
    this.dcOhms = Float64Array.from(this.sources, (x) => x.ohms);
    this.trOhms = new Float64Array(nu);
    this.trOhms.set(this.dcOhms, this.caps.length); // capacitor entries: set by compile()
    this.trOhms.fill(1, 0, this.caps.length);
    this.trCompiler = new LinearNetworkCompiler(topology([...this.caps.map((c) => c.branch), ...sourcePorts], this.trOhms));
    this.dcCompiler = new LinearNetworkCompiler(topology(sourcePorts, this.dcOhms));
    this.tr = this.trCompiler.createMatrices();
    this.dc = this.dcCompiler.createMatrices();
    this.capV = new Float64Array(this.caps.length);
    this.capI = new Float64Array(this.caps.length);
    this.capR = new Float64Array(this.caps.length);
    this.capVPrev = new Float64Array(this.caps.length);
    // history source (the generated stage 1): trapezoidal w = v[n-1] + R i[n-1], BDF2 w = 4/3 v[n-1] - 1/3 v[n-2]
    this.u = new Float64Array(nu);
    const m = this.nlPorts.length,
      nx = this.caps.length + 1 + m;
    this.p = new Float64Array(m);
    this.invCapR = new Float64Array(this.caps.length);
    this.x = new Float64Array(nx);
    this.Pd = new Float64Array(m * (this.caps.length + 1));
    this.pConst = new Float64Array(m);
    this.Cd = new Float64Array(this.caps.length * nx);
    this.cConst = new Float64Array(this.caps.length);
    this.Od = new Float64Array(nx);
    const bdf2 = this.caps.map((c) => c.bdf2);
    this.stage1 = compileLinearStage1({ nc: this.caps.length, m, bdf2 });
    this.stage2 = compileLinearStage2({ nc: this.caps.length, m, bdf2 });
    const prepared = options.prepared;
    if (prepared) this.adoptMatrices(prepared.matrices);
    else this.compile();
    this.root = new NewtonRoot(this.devices, this.tr.F, this.limiters);
    this.averager = averaged ? new RootAverager(this.devices, this.tr.F, options.averaging, this.limiters) : null;
    this.rootCurrents = this.averager ? this.averager.iMean : this.root.i;
    this.dcRoot = new NewtonRoot(this.devices, new Float64Array(this.nlPorts.length ** 2), this.limiters);
    if (prepared) {
      if (prepared.rootVolts.length !== m) throw new Error('prepared state does not match this circuit (root size)');
      this.dcRoot.v.set(prepared.rootVolts);
      this.op = prepared.operatingPoint;
    }
    this.resetToOperatingPoint();
  }

  get outputNodeName(): string {
    return this.circuit.output.node;
  }

  get inputNodeName(): string {
    return this.circuit.input.node;
  }

  get sampleRate(): number {
    return this.sampleRateHz;
  }

  /** Delay of the root averaging, in (engine-rate) samples: 0.5 when 'averaged', else 0. */
  get averagingDelaySamples(): number {
    return this.averager ? 0.5 : 0;
  }

  /**
   * The compiled transient matrices (for checks). Value changes recompile them in place, so the
   * arrays are the same objects for the engine's life; do not modify them.
   */
  get linearMatrices(): RootMatrices {
    return this.tr;
  }

  /**
   * Newton statistics of the transient root. `fallbacks`: samples whose solve converged only by
   * continuation (or, averaged, whose mean fell back to the end-point currents); `failures`:
   * samples that did not converge even so, whose state was held (see stepFrom).
   */
  get solverStats(): SolverStats {
    const av = this.averager;
    return {
      solves: this.root.solves,
      iterations: this.root.iterationsTotal,
      failures: this.root.failures,
      fallbacks: this.root.fallbacks + (av ? av.fallbacks[0]! : 0),
      interiorSolves: av ? av.interiorSolves[0]! : 0,
    };
  }

  /** Samples that needed the solver's fallback since the engine was built (an integer; no object, for meters). */
  get fallbackSamples(): number {
    return this.root.fallbacks + (this.averager ? this.averager.fallbacks[0]! | 0 : 0);
  }

  /** Samples that did not converge even by the fallback (their state was held) since the engine was built. */
  get failedSamples(): number {
    return this.root.failures;
  }

  /** Recompile the transient matrices in place for the present values (allocation-free). */
  private compile(): void {
    const T = 1 / this.sampleRateHz,
      nc = this.caps.length;
    for (let j = 0; j < nc; j++) {
      const farads = this.capFarads[j]!;
      // port resistance T/(2C) (trapezoidal) or 2T/(3C) (BDF2)
      const ohms = this.caps[j]!.bdf2 ? (2 * T) / (3 * farads) : T / (2 * farads);
      this.capR[j] = ohms;
      this.trOhms[j] = ohms;
    }
    this.trCompiler.compile(this.condSiemens, this.trOhms, this.tr);
    this.packMaps();
    this.dcValid = false;
    // NewtonRoot copies F (transposed) into its own storage; this.tr.F is the same array throughout
    this.root?.setF(this.tr.F);
    this.averager?.setF(this.tr.F);
    this.op = null;
  }

  /** Take compiled transient matrices (PreparedEngineState) instead of compiling them. */
  private adoptMatrices(src: RootMatrices): void {
    const tr = this.tr;
    if (src.nodeCount !== tr.nodeCount || src.nu !== tr.nu || src.m !== tr.m) throw new Error('prepared state does not match this circuit (matrix sizes)');
    const T = 1 / this.sampleRateHz;
    for (let j = 0; j < this.caps.length; j++) {
      const farads = this.capFarads[j]!;
      const ohms = this.caps[j]!.bdf2 ? (2 * T) / (3 * farads) : T / (2 * farads);
      this.capR[j] = ohms;
      this.trOhms[j] = ohms;
    }
    tr.E.set(src.E);
    tr.F.set(src.F);
    tr.Pu.set(src.Pu);
    tr.Pi.set(src.Pi);
    tr.Zu.set(src.Zu);
    tr.Zi.set(src.Zi);
    this.packMaps();
    this.dcValid = false;
  }

  /**
   * Everything a twin engine (same circuit, rate and options) needs to start without compiling
   * or solving: copies of the transient matrices, the operating point and the DC root's state
   * (solved here if needed). See circuit/plan.ts.
   */
  preparedState(): PreparedEngineState {
    const operatingPoint = this.operatingPoint();
    const t = this.tr;
    return {
      matrices: {
        nodeCount: t.nodeCount,
        nu: t.nu,
        m: t.m,
        E: t.E.slice(),
        F: t.F.slice(),
        Pu: t.Pu.slice(),
        Pi: t.Pi.slice(),
        Zu: t.Zu.slice(),
        Zi: t.Zi.slice(),
      },
      operatingPoint,
      rootVolts: this.dcRoot.v.slice(),
    };
  }

  /** Dense per-sample maps from the compiled matrices (into preallocated storage). */
  private packMaps(): void {
    const tr = this.tr,
      nu = tr.nu,
      m = tr.m,
      nc = this.caps.length,
      nd = nc + 1;
    for (let j = 0; j < nc; j++) this.invCapR[j] = 1 / this.capR[j]!;
    const nx = nd + m,
      Pd = this.Pd,
      Cd = this.Cd,
      Od = this.Od;
    for (let r = 0; r < m; r++) for (let c = 0; c < nd; c++) Pd[r * nd + c] = tr.E[r * nu + c]!;
    for (let j = 0; j < nc; j++) {
      for (let c = 0; c < nd; c++) Cd[j * nx + c] = tr.Pu[j * nu + c]!;
      for (let c = 0; c < m; c++) Cd[j * nx + nd + c] = tr.Pi[j * m + c]!;
    }
    Od.fill(0);
    const on = this.outputNode;
    if (on >= 0) {
      for (let c = 0; c < nd; c++) Od[c] = tr.Zu[on * nu + c]!;
      for (let c = 0; c < m; c++) Od[nd + c] = tr.Zi[on * m + c]!;
    }
    this.constDirty = true;
  }

  /** Constant-source (dc-source) contributions, recomputed only when an EMF changes. */
  private updateConstants(): void {
    const tr = this.tr,
      nu = tr.nu,
      m = tr.m,
      nc = this.caps.length,
      ns = this.sources.length,
      u = this.u;
    for (let s = 1; s < ns; s++) u[nc + s] = this.sourceVolts[s]!;
    for (let r = 0; r < m; r++) {
      let acc = 0;
      for (let s = 1; s < ns; s++) acc += tr.E[r * nu + nc + s]! * u[nc + s]!;
      this.pConst[r] = acc;
    }
    for (let j = 0; j < nc; j++) {
      let acc = 0;
      for (let s = 1; s < ns; s++) acc += tr.Pu[j * nu + nc + s]! * u[nc + s]!;
      this.cConst[j] = acc;
    }
    let acc = 0;
    const on = this.outputNode;
    if (on >= 0) for (let s = 1; s < ns; s++) acc += tr.Zu[on * nu + nc + s]! * u[nc + s]!;
    this.oConst[0] = acc;
    this.constDirty = false;
  }

  /**
   * Change component values at run time (batched: one recompilation). Capacitor voltages and
   * currents are kept. All updates are checked before any is applied. Allocates nothing (the
   * audio thread calls this on every glide step).
   */
  setValues(updates: readonly ValueUpdate[]): void {
    let recompile = false;
    for (let k = 0; k < updates.length; k++) {
      const up = updates[k]!;
      const slot = this.slots.get(up.id);
      if (!slot) throw new Error(`no element "${up.id}" in this circuit`);
      if (!Number.isFinite(up.value)) throw new Error(`value for ${up.id} must be finite`);
      if (slot.kind === 'resistor') {
        if (!(up.value > 0)) throw new Error(`${up.id}: resistance must be positive`);
        recompile = true;
      } else if (slot.kind === 'capacitor') {
        if (!(up.value > 0)) throw new Error(`${up.id}: capacitance must be positive`);
        recompile = true;
      } else if (slot.kind !== 'dc-source') throw new Error(`${up.id}: a ${slot.kind} has no single value to set`);
    }
    for (let k = 0; k < updates.length; k++) {
      const up = updates[k]!;
      const slot = this.slots.get(up.id)!;
      if (slot.kind === 'resistor') {
        this.condOhms[slot.index] = up.value;
        this.condSiemens[slot.index] = 1 / up.value;
      } else if (slot.kind === 'capacitor') {
        if (slot.index >= 0) this.capFarads[slot.index] = up.value;
      } else {
        if (slot.index >= 0) this.sourceVolts[slot.index] = up.value;
        this.op = null;
        this.constDirty = true;
      }
    }
    if (recompile) this.compile();
  }

  /** Open or close a switch (one recompilation, state kept; allocates nothing). */
  setSwitch(id: string, closed: boolean): void {
    const slot = this.slots.get(id);
    if (!slot || slot.kind !== 'switch') throw new Error(`no switch "${id}" in this circuit`);
    this.condSiemens[slot.index] = closed ? 1 / this.condOhms[slot.index]! : OPEN_SWITCH_SIEMENS;
    this.compile();
  }

  /** Tube sample factor (plate and screen current scale: weak < 1 < strong). */
  setTubeSample(id: string, factor: number): void {
    const t = this.tubeById.get(id);
    if (!t) throw new Error(`no tube "${id}" in this circuit`);
    if (!(factor > 0 && factor < 10)) throw new Error(`${id}: sample factor must be between 0 and 10`);
    t.device.sample = factor;
    this.op = null;
  }

  /** Per-sample override of a dc-source EMF (supply ripple); cheap, no recompilation. */
  setSourceVolts(id: string, volts: number): void {
    const j = this.sourceIndex.get(id);
    if (j === undefined) throw new Error(`no dc-source "${id}"`);
    this.sourceVolts[j] = volts;
    this.constDirty = true;
  }

  setSampleRate(sampleRateHz: number): void {
    this.sampleRateHz = sampleRateHz;
    this.compile();
  }

  /** DC operating point: capacitors open, input at 0 V, supplies stepped up from zero. */
  operatingPoint(): OperatingPoint {
    if (this.op) return this.op;
    if (!this.dcValid) {
      this.dcCompiler.compile(this.condSiemens, this.dcOhms, this.dc);
      this.dcValid = true;
    }
    const dc = this.dc;
    this.dcRoot.setF(dc.F);
    const ns = this.sources.length;
    const uFull = new Float64Array(ns);
    for (let j = 1; j < ns; j++) uFull[j] = this.sourceVolts[j]!;
    const m = this.nlPorts.length;
    const p = new Float64Array(m);
    const solveAt = (steps: number): number => {
      this.dcRoot.v.fill(0);
      let its = 0;
      for (let k = 1; k <= steps; k++) {
        const s = k / steps;
        for (let r = 0; r < m; r++) {
          let acc = 0;
          for (let c = 0; c < ns; c++) acc += dc.E[r * ns + c]! * uFull[c]! * s;
          p[r] = acc;
        }
        const n = this.dcRoot.solve(p, DC);
        if (n < 0) return -1;
        its += n;
      }
      return its;
    };
    let steps = 10;
    let its = solveAt(steps);
    while (its < 0 && steps < 2000) {
      steps *= 4;
      its = solveAt(steps);
    }
    if (its < 0) throw new OperatingPointError('DC operating point did not converge even with fine supply stepping');
    const v = this.dcRoot.v,
      i = this.dcRoot.i;
    const nodes: Record<string, number> = {};
    this.nodeNames.forEach((name, n) => {
      let acc = 0;
      for (let c = 0; c < ns; c++) acc += dc.Zu[n * ns + c]! * uFull[c]!;
      for (let c = 0; c < m; c++) acc += dc.Zi[n * m + c]! * i[c]!;
      nodes[name] = acc;
    });
    nodes[this.circuit.ground] = 0;
    const tubes: Record<string, TubeOperatingPoint> = {};
    for (const t of this.tubes) {
      const o = t.offset;
      const pent = t.el.kind === 'pentode';
      const ig = i[o]!,
        ip = i[o + 1]!,
        is = pent ? i[o + 2]! : 0;
      const vsk = pent ? v[o + 2]! : 0;
      tubes[t.el.id] = {
        kind: t.el.kind,
        plateAmps: ip,
        plateWatts: ip * v[o + 1]!,
        gridAmps: ig,
        screenAmps: is,
        screenWatts: is * vsk,
        cathodeAmps: ig + ip + is,
        vgk: v[o]!,
        vpk: v[o + 1]!,
        vsk,
      };
    }
    this.op = { nodes, tubes, iterations: its, supplySteps: steps };
    return this.op;
  }

  /** Put every capacitor at its DC voltage and the root at the DC solution: the next sample is steady. */
  resetToOperatingPoint(): void {
    const op = this.operatingPoint();
    const volt = (n: number) => (n < 0 ? 0 : op.nodes[this.nodeNames[n]!]!);
    this.caps.forEach((c, j) => {
      this.capV[j] = volt(c.branch.a) - volt(c.branch.b);
      this.capVPrev[j] = this.capV[j]!;
      this.capI[j] = 0;
    });
    // the root's input p at rest (input 0): the DC solution solves it, a continuation may start there
    if (this.constDirty) this.updateConstants();
    const io = this.io;
    io[0] = 0;
    this.stage1(io, 0, this.capV, this.capVPrev, this.capI, this.capR, this.Pd, this.pConst, this.x, this.p);
    this.root.setState(this.dcRoot.v, this.p);
    this.lastOut[0] = this.outputNode < 0 ? 0 : op.nodes[this.nodeNames[this.outputNode]!]!;
    this.averager?.reset();
    this.atRest = true;
    this.probesAtOperatingPoint();
  }

  /** Probe values at rest (until the next sample): the operating point's node voltages. */
  private probesAtOperatingPoint(): void {
    const op = this.op;
    if (!op) return;
    const rows = this.probeRows;
    for (let k = 0; k < rows.length; k++) {
      const n = rows[k]!;
      this.probeBuf[k] = n < 0 ? 0 : op.nodes[this.nodeNames[n]!]!;
    }
    this.probesStale = false;
  }

  /** Choose node voltages to read after every sample (probeValues). */
  setProbes(nodeNames: readonly string[]): void {
    this.probeRows = Int32Array.from(
      nodeNames.map((n) => {
        if (n === this.circuit.ground) return -1;
        const i = this.nodeIndex.get(n);
        if (i === undefined) throw new Error(`no node "${n}" to probe`);
        return i;
      }),
    );
    this.probeBuf = new Float64Array(nodeNames.length);
    if (this.atRest) this.probesAtOperatingPoint();
    else this.probesStale = true;
  }

  /** One sample: input source EMF in volts, returns the output node voltage in volts. */
  processSample(vin: number): number {
    const io = this.io;
    io[0] = vin;
    this.stepFrom(io, 0, io, 1);
    return io[1]!;
  }

  /**
   * One sample from src[k] (input volts) to dst[j] (output volts; 0 if not finite). The audio
   * path calls this rather than processSample: no double crosses a call, so nothing is boxed.
   */
  stepFrom(src: Float64Array, k: number, dst: Float64Array, j: number): void {
    if (this.constDirty) this.updateConstants();
    const x = this.x,
      p = this.p,
      capV = this.capV,
      capI = this.capI,
      capVPrev = this.capVPrev;
    this.stage1(src, k, capV, capVPrev, capI, this.capR, this.Pd, this.pConst, x, p);
    const root = this.root;
    if (root.solve(p, TRANSIENT) < 0) {
      // Not converged, even by continuation: an unconverged iterate never reaches the capacitor
      // states. Hold the last converged sample's state and output (solverStats.failures counts it).
      dst[j] = this.lastOut[0]!;
      this.probesStale = true;
      this.atRest = false;
      return;
    }
    if (this.averager) this.averager.step(p, root.v, root.i);
    this.stage2(this.rootCurrents, x, this.Cd, this.cConst, this.invCapR, capV, capVPrev, capI, this.Od, this.oConst, dst, j);
    this.lastOut[0] = dst[j]!;
    this.probesStale = true;
    this.atRest = false;
  }

  /**
   * Probe node voltages after the last processed sample, in the order given to setProbes.
   * Computed when read, from the last sample's leaf waves and root currents (the same values as
   * computing them after every sample: the meters read them once per block, and at 4x the
   * per-sample pass was ~60 multiply-adds of ~450).
   */
  get probeValues(): Float64Array {
    if (this.probesStale) {
      this.writeProbes();
      this.probesStale = false;
    }
    return this.probeBuf;
  }

  /**
   * probeValues from the present leaf waves and root currents (one pass, no number results): the
   * capacitor waves and the input are in x[0..nc] (stage 1), the other sources' EMFs in u.
   */
  private writeProbes(): void {
    const tr = this.tr,
      nu = tr.nu,
      m = tr.m,
      u = this.u,
      x = this.x,
      nd = this.caps.length + 1,
      i = this.root.i,
      rows = this.probeRows,
      out = this.probeBuf;
    const Zu = tr.Zu,
      Zi = tr.Zi;
    for (let k = 0; k < rows.length; k++) {
      const n = rows[k]!;
      let acc = 0;
      if (n >= 0) {
        for (let c = 0; c < nd; c++) acc += Zu[n * nu + c]! * x[c]!;
        for (let c = nd; c < nu; c++) acc += Zu[n * nu + c]! * u[c]!;
        for (let c = 0; c < m; c++) acc += Zi[n * m + c]! * i[c]!;
      }
      out[k] = acc;
    }
  }

  /** Process a block of input volts into output volts (arrays may be the same). */
  processBlock(input: ArrayLike<number>, output: { [k: number]: number; length: number }, n = input.length): void {
    for (let k = 0; k < n; k++) output[k] = this.processSample(input[k]!);
  }
}
