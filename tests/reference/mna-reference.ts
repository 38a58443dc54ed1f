// Independent reference simulator for netlist-v1 (docs: docs/netlist-v1.md).
// Plain modified nodal analysis (MNA) over every element, trapezoidal-rule capacitor
// companion models, full Newton-Raphson on the whole nodal system at every sample.
// Written from the spec only; shares no code with src/. Used by tests, not by the product.

export interface TubeOperatingPoint {
  readonly plateAmps: number;
  readonly gridAmps: number;
  readonly screenAmps: number;
  /** plate current × plate-to-cathode voltage */
  readonly plateWatts: number;
}

export interface OperatingPoint {
  /** node voltages to ground, ground itself included (0 V) */
  readonly nodes: Record<string, number>;
  readonly tubes: Record<string, TubeOperatingPoint>;
}

export interface SimulationResult {
  readonly output: Float64Array;
  /** voltages of the nodes asked for in options.nodes */
  readonly nodes: Record<string, Float64Array>;
  /** Newton iterations over the whole run and the most in any one sample */
  readonly newtonIterations: { readonly total: number; readonly maxPerSample: number };
  /** Samples where plain Newton failed and the continuation fallback solved the step. */
  readonly continuationSamples: number;
}

export interface SimulationOptions {
  /** node names whose voltages to record, or "all" */
  readonly nodes?: readonly string[] | 'all';
  /** Newton iteration limit per time step (default 100) */
  readonly maxNewtonIterations?: number;
  /**
   * Solve every sample by continuation in this many sub-steps (see solveByContinuation), not
   * only the samples where plain Newton fails; for checking that the solution does not depend
   * on the path taken to it (default 0: continuation only as a fallback).
   */
  readonly continuationSteps?: number;
}

/** Thrown when Newton-Raphson does not converge; never returns an unconverged result. */
export class MnaConvergenceError extends Error {
  override readonly name = 'MnaConvergenceError';
}

// ---------------------------------------------------------------- tolerances
const UPDATE_ABS_TOL_VOLTS = 1e-10;
const UPDATE_REL_TOL = 1e-12;
const BRANCH_ABS_TOL_AMPS = 1e-12;
// fallback stop at the round-off floor: an update under 1e-9 V that no longer halves
const ROUNDOFF_ACCEPT_VOLTS = 1e-9;
const MAX_STEP_VOLTS = 25; // step limiting: largest node-voltage change per Newton iteration
// gmin, added ONLY from nodes that have no DC path to ground through resistors or sources
// (e.g. a node between two series capacitors); without it their DC voltage is undefined.
const FLOATING_NODE_GMIN_SIEMENS = 1e-12;

// ---------------------------------------------------------------- parsed circuit
interface KorenTriodeParams {
  readonly mu: number;
  readonly ex: number;
  readonly kg1: number;
  readonly kp: number;
  readonly kvb: number;
}
interface KorenPentodeParams extends KorenTriodeParams {
  readonly kg2: number;
}
interface GridLawParams {
  readonly gg: number;
  readonly cg: number;
  readonly xi: number;
  readonly ig0: number;
}
/** netlist-v1 "initial-velocity" grid law (docs/netlist-v1.md). */
interface InitialVelocityGridParams {
  readonly gg: number;
  readonly xi: number;
  readonly cathodeKelvin: number;
  readonly onsetVolts: number;
}

interface Tube {
  readonly id: string;
  readonly pentode: boolean;
  readonly plate: number; // unknown index, -1 = ground
  readonly grid: number;
  readonly cathode: number;
  readonly screen: number; // -1 for triodes (unused)
  readonly triode?: KorenTriodeParams;
  readonly pent?: KorenPentodeParams;
  readonly gridLaw?: GridLawParams;
  readonly initialVelocity?: InitialVelocityGridParams;
}

interface TwoTerminal {
  readonly id: string;
  readonly a: number;
  readonly b: number;
}
interface Resistor extends TwoTerminal {
  readonly ohms: number;
}
interface Capacitor extends TwoTerminal {
  readonly farads: number;
}
interface Source extends TwoTerminal {
  /** series resistance; 0 = ideal, solved with an extra branch-current unknown */
  readonly ohms: number;
  readonly volts: number;
  readonly branch: number; // unknown index of the branch current, -1 when ohms > 0
}

interface Circuit {
  readonly nodeNames: readonly string[];
  readonly nodeIndex: ReadonlyMap<string, number>; // ground -> -1
  readonly ground: string;
  readonly size: number; // node unknowns + branch unknowns
  readonly nodeCount: number;
  readonly resistors: readonly Resistor[];
  readonly capacitors: readonly Capacitor[];
  readonly dcSources: readonly Source[];
  readonly input: Source; // volts unused (driven per sample); a = input node, b = ground
  readonly tubes: readonly Tube[];
  readonly output: number;
  readonly floatingNodes: readonly number[];
}

// ---------------------------------------------------------------- parsing
type Obj = Record<string, unknown>;

function fail(message: string): never {
  throw new Error(`netlist: ${message}`);
}
function isObj(v: unknown): v is Obj {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}
function num(o: Obj, key: string, where: string, min: 'positive' | 'nonnegative' | 'any'): number {
  const v = o[key];
  if (typeof v !== 'number' || !Number.isFinite(v)) fail(`${where}: "${key}" must be a finite number`);
  if (min === 'positive' && !(v > 0)) fail(`${where}: "${key}" must be > 0, got ${v}`);
  if (min === 'nonnegative' && !(v >= 0)) fail(`${where}: "${key}" must be >= 0, got ${v}`);
  return v;
}
function str(o: Obj, key: string, where: string): string {
  const v = o[key];
  if (typeof v !== 'string' || v.length === 0) fail(`${where}: "${key}" must be a non-empty string`);
  return v;
}

function parseNetlist(netlist: unknown): Circuit {
  if (!isObj(netlist)) fail('top level must be a JSON object');
  if (netlist['schema'] !== 'valvewright.netlist.v1') {
    fail(`"schema" must be "valvewright.netlist.v1", got ${JSON.stringify(netlist['schema'])}`);
  }
  const groundRaw = netlist['ground'];
  if (groundRaw !== undefined && (typeof groundRaw !== 'string' || groundRaw.length === 0)) {
    fail('"ground" must be a non-empty string');
  }
  const ground = groundRaw ?? '0';
  const inputRaw = netlist['input'];
  const outputRaw = netlist['output'];
  if (!isObj(inputRaw)) fail('"input" must be an object { node, ohms }');
  if (!isObj(outputRaw)) fail('"output" must be an object { node }');
  const elements = netlist['elements'];
  if (!Array.isArray(elements)) fail('"elements" must be an array');

  const nodeIndex = new Map<string, number>([[ground, -1]]);
  const nodeNames: string[] = [];
  const node = (name: string): number => {
    let i = nodeIndex.get(name);
    if (i === undefined) {
      i = nodeNames.length;
      nodeNames.push(name);
      nodeIndex.set(name, i);
    }
    return i;
  };

  const ids = new Set<string>();
  const resistors: Resistor[] = [];
  const capacitors: Capacitor[] = [];
  const dcRaw: { id: string; a: number; b: number; ohms: number; volts: number }[] = [];
  const tubes: Tube[] = [];

  elements.forEach((e: unknown, k: number) => {
    if (!isObj(e)) fail(`elements[${k}] must be an object`);
    const id = str(e, 'id', `elements[${k}]`);
    if (ids.has(id)) fail(`duplicate element id "${id}"`);
    ids.add(id);
    const kind = e['kind'];
    const where = `element ${id}`;
    if (kind === 'resistor' || kind === 'capacitor' || kind === 'dc-source') {
      const nodes = e['nodes'];
      if (
        !Array.isArray(nodes) ||
        nodes.length !== 2 ||
        typeof nodes[0] !== 'string' ||
        typeof nodes[1] !== 'string' ||
        nodes[0].length === 0 ||
        nodes[1].length === 0
      ) {
        fail(`${where}: "nodes" must be an array of two node names`);
      }
      const a = node(nodes[0]);
      const b = node(nodes[1]);
      if (kind === 'resistor') resistors.push({ id, a, b, ohms: num(e, 'ohms', where, 'positive') });
      else if (kind === 'capacitor') capacitors.push({ id, a, b, farads: num(e, 'farads', where, 'positive') });
      else dcRaw.push({ id, a, b, volts: num(e, 'volts', where, 'any'), ohms: num(e, 'ohms', where, 'nonnegative') });
    } else if (kind === 'triode' || kind === 'pentode') {
      const nodes = e['nodes'];
      if (!isObj(nodes)) fail(`${where}: "nodes" must be an object { plate, grid, cathode${kind === 'pentode' ? ', screen' : ''} }`);
      const plate = node(str(nodes, 'plate', `${where} nodes`));
      const grid = node(str(nodes, 'grid', `${where} nodes`));
      const cathode = node(str(nodes, 'cathode', `${where} nodes`));
      const screen = kind === 'pentode' ? node(str(nodes, 'screen', `${where} nodes`)) : -1;
      const model = e['model'];
      if (!isObj(model)) fail(`${where}: "model" must be an object`);
      const wantName = kind === 'triode' ? 'koren-triode' : 'koren-pentode';
      if (model['name'] !== wantName) fail(`${where}: model name must be "${wantName}", got ${JSON.stringify(model['name'])}`);
      const mw = `${where} model`;
      const base: KorenTriodeParams = {
        mu: num(model, 'mu', mw, 'positive'),
        ex: num(model, 'ex', mw, 'positive'),
        kg1: num(model, 'kg1', mw, 'positive'),
        kp: num(model, 'kp', mw, 'positive'),
        kvb: num(model, 'kvb', mw, 'positive'),
      };
      let gridLaw: GridLawParams | undefined;
      let initialVelocity: InitialVelocityGridParams | undefined;
      const gc = e['gridCurrent'];
      if (gc !== undefined) {
        if (!isObj(gc)) fail(`${where}: "gridCurrent" must be an object`);
        const gw = `${where} gridCurrent`;
        if (gc['name'] === 'initial-velocity') initialVelocity = parseInitialVelocity(gc, gw);
        else {
          if (gc['name'] !== 'dempwolf-zolzer')
            fail(`${where}: gridCurrent name must be "dempwolf-zolzer" or "initial-velocity", got ${JSON.stringify(gc['name'])}`);
          gridLaw = {
            gg: num(gc, 'gg', gw, 'positive'),
            cg: num(gc, 'cg', gw, 'positive'),
            xi: num(gc, 'xi', gw, 'positive'),
            ig0: num(gc, 'ig0', gw, 'nonnegative'),
          };
        }
      }
      const laws = { ...(gridLaw ? { gridLaw } : {}), ...(initialVelocity ? { initialVelocity } : {}) };
      const t: Tube =
        kind === 'triode'
          ? { id, pentode: false, plate, grid, cathode, screen, triode: base, ...laws }
          : { id, pentode: true, plate, grid, cathode, screen, pent: { ...base, kg2: num(model, 'kg2', mw, 'positive') }, ...laws };
      tubes.push(t);
    } else {
      fail(`${where}: unknown kind ${JSON.stringify(kind)}`);
    }
  });

  const inputNodeName = str(inputRaw, 'node', 'input');
  if (inputNodeName === ground) fail('input node must not be the ground node');
  const inputNode = nodeIndex.get(inputNodeName);
  if (inputNode === undefined) fail(`input node "${inputNodeName}" is not connected to any element`);
  const inputOhms = num(inputRaw, 'ohms', 'input', 'nonnegative');
  const outputNodeName = str(outputRaw, 'node', 'output');
  const output = nodeIndex.get(outputNodeName);
  if (output === undefined) fail(`output node "${outputNodeName}" is not connected to any element`);

  const nodeCount = nodeNames.length;
  let next = nodeCount;
  const dcSources: Source[] = dcRaw.map((d) => ({ ...d, branch: d.ohms > 0 ? -1 : next++ }));
  const input: Source = { id: 'input', a: inputNode, b: -1, ohms: inputOhms, volts: 0, branch: inputOhms > 0 ? -1 : next++ };

  // DC connectivity (resistors and sources only) to find floating nodes.
  const parent = Array.from({ length: nodeCount + 1 }, (_, i) => i); // slot nodeCount = ground
  const find = (i: number): number => {
    let r = i;
    while (parent[r] !== r) r = parent[r]!;
    return r;
  };
  const join = (a: number, b: number): void => {
    parent[find(a < 0 ? nodeCount : a)] = find(b < 0 ? nodeCount : b);
  };
  for (const r of resistors) join(r.a, r.b);
  for (const s of dcSources) join(s.a, s.b);
  join(input.a, input.b);
  const floatingNodes: number[] = [];
  for (let i = 0; i < nodeCount; i++) if (find(i) !== find(nodeCount)) floatingNodes.push(i);

  return {
    nodeNames,
    nodeIndex,
    ground,
    size: next,
    nodeCount,
    resistors,
    capacitors,
    dcSources,
    input,
    tubes,
    output,
    floatingNodes,
  };
}

// ---------------------------------------------------------------- tube equations (spec, exact)
/** softplus(z) = ln(1 + e^z), evaluated without overflow */
function softplus(z: number): number {
  return z > 0 ? z + Math.log1p(Math.exp(-z)) : Math.log1p(Math.exp(z));
}

/** Writes [Ip, Ig, Is] (amperes) for cathode-relative voltages into out. */
function tubeCurrents(t: Tube, vgk: number, vpk: number, vsk: number, out: Float64Array): void {
  let ip = 0;
  let is = 0;
  if (t.triode) {
    const p = t.triode;
    if (vpk > 0) {
      const e1 = (vpk / p.kp) * softplus(p.kp * (1 / p.mu + vgk / Math.sqrt(p.kvb + vpk * vpk)));
      if (e1 > 0) ip = (2 * Math.pow(e1, p.ex)) / p.kg1;
    }
  } else if (t.pent) {
    const p = t.pent;
    if (vsk > 0 && vpk > 0) {
      const z = p.kp * (1 / p.mu + vgk / vsk);
      // (vsk/kp)·z written out as vsk/mu + vgk so a tiny vsk cannot give Inf·0
      const e1 = z > 0 ? vsk / p.mu + vgk + (vsk / p.kp) * Math.log1p(Math.exp(-z)) : (vsk / p.kp) * Math.log1p(Math.exp(z));
      if (e1 > 0) ip = ((2 * Math.pow(e1, p.ex)) / p.kg1) * Math.atan(vpk / p.kvb);
    }
    const base = vgk + vsk / p.mu;
    if (base > 0) is = Math.pow(base, p.ex) / p.kg2;
  }
  let ig = 0;
  if (t.gridLaw) {
    const g = t.gridLaw;
    ig = g.gg * Math.pow(softplus(g.cg * vgk) / g.cg, g.xi) + g.ig0;
  }
  if (t.initialVelocity) ig = initialVelocityCurrent(t.initialVelocity, vgk);
  out[0] = ip;
  out[1] = ig;
  out[2] = is;
}

// ---------------------------------------------------------------- initial-velocity grid law (spec, exact)
function parseInitialVelocity(gc: Obj, where: string): InitialVelocityGridParams {
  const p = {
    gg: num(gc, 'gg', where, 'positive'),
    xi: num(gc, 'xi', where, 'positive'),
    cathodeKelvin: num(gc, 'cathodeKelvin', where, 'positive'),
    onsetVolts: num(gc, 'onsetVolts', where, 'any'),
  };
  return p;
}

/** Ig of the initial-velocity law, written from docs/netlist-v1.md: Vt = k·T/q (SI 2019 exact k and q). */
function initialVelocityCurrent(g: InitialVelocityGridParams, vgk: number): number {
  const vt = (1.380649e-23 * g.cathodeKelvin) / 1.602176634e-19;
  const u = vgk - g.onsetVolts;
  return u <= 0 ? g.gg * Math.pow(g.xi * vt, g.xi) * Math.exp(u / vt) : g.gg * Math.pow(u + g.xi * vt, g.xi);
}

// ---------------------------------------------------------------- dense linear algebra
/** In-place LU factorisation with partial pivoting (Gaussian elimination); perm gets row swaps. */
function luFactor(a: Float64Array, n: number, perm: Int32Array): void {
  for (let col = 0; col < n; col++) {
    let piv = col;
    let best = Math.abs(a[col * n + col]!);
    for (let r = col + 1; r < n; r++) {
      const v = Math.abs(a[r * n + col]!);
      if (v > best) {
        best = v;
        piv = r;
      }
    }
    if (!(best > 1e-300)) throw new MnaConvergenceError(`mna-reference: singular nodal matrix at unknown ${col} (ideal-source loop or unconnected node?)`);
    perm[col] = piv;
    if (piv !== col) {
      for (let c = 0; c < n; c++) {
        const t = a[col * n + c]!;
        a[col * n + c] = a[piv * n + c]!;
        a[piv * n + c] = t;
      }
    }
    const d = a[col * n + col]!;
    for (let r = col + 1; r < n; r++) {
      const f = a[r * n + col]! / d;
      a[r * n + col] = f;
      if (f === 0) continue;
      for (let c = col + 1; c < n; c++) a[r * n + c] = a[r * n + c]! - f * a[col * n + c]!;
    }
  }
}

/** Solves A·x = b in place from luFactor's factors (P·A = L·U): b := P·b, then L, then U. */
function luSolve(lu: Float64Array, n: number, perm: Int32Array, b: Float64Array): void {
  for (let col = 0; col < n; col++) {
    const p = perm[col]!;
    if (p !== col) {
      const t = b[col]!;
      b[col] = b[p]!;
      b[p] = t;
    }
  }
  for (let col = 0; col < n; col++) {
    const bc = b[col]!;
    if (bc !== 0) for (let r = col + 1; r < n; r++) b[r] = b[r]! - lu[r * n + col]! * bc;
  }
  for (let r = n - 1; r >= 0; r--) {
    let s = b[r]!;
    for (let c = r + 1; c < n; c++) s -= lu[r * n + c]! * b[c]!;
    b[r] = s / lu[r * n + r]!;
  }
}

// ---------------------------------------------------------------- system assembly
function addEntry(m: Float64Array, n: number, r: number, c: number, v: number): void {
  if (r >= 0 && c >= 0) m[r * n + c] = m[r * n + c]! + v;
}
function stampConductance(m: Float64Array, n: number, a: number, b: number, g: number): void {
  addEntry(m, n, a, a, g);
  addEntry(m, n, b, b, g);
  addEntry(m, n, a, b, -g);
  addEntry(m, n, b, a, -g);
}
function stampSourceMatrix(m: Float64Array, n: number, s: Source): void {
  if (s.ohms > 0) {
    stampConductance(m, n, s.a, s.b, 1 / s.ohms);
  } else {
    // branch current j leaves node a into the source and returns to node b; row: va - vb = V
    addEntry(m, n, s.a, s.branch, 1);
    addEntry(m, n, s.b, s.branch, -1);
    addEntry(m, n, s.branch, s.a, 1);
    addEntry(m, n, s.branch, s.b, -1);
  }
}
function addRhs(b: Float64Array, i: number, v: number): void {
  if (i >= 0) b[i] = b[i]! + v;
}
/** Linear part of the system matrix; capGeq = 2C/T per capacitor, or null for DC (open). */
function linearMatrix(c: Circuit, capGeqSiemens: Float64Array | null, extraGminSiemens: number): Float64Array {
  const n = c.size;
  const m = new Float64Array(n * n);
  for (const r of c.resistors) stampConductance(m, n, r.a, r.b, 1 / r.ohms);
  if (capGeqSiemens) c.capacitors.forEach((cap, k) => stampConductance(m, n, cap.a, cap.b, capGeqSiemens[k]!));
  for (const s of c.dcSources) stampSourceMatrix(m, n, s);
  stampSourceMatrix(m, n, c.input);
  for (const i of c.floatingNodes) addEntry(m, n, i, i, FLOATING_NODE_GMIN_SIEMENS);
  if (extraGminSiemens > 0) for (let i = 0; i < c.nodeCount; i++) addEntry(m, n, i, i, extraGminSiemens);
  return m;
}

function volt(x: Float64Array, i: number): number {
  return i < 0 ? 0 : x[i]!;
}

/** Everything besides x that the residual of one solve depends on. */
interface SolveState {
  /** multiplies every dc-source voltage (source stepping) */
  dcScale: number;
  inputVolts: number;
  /** 2C/T per capacitor in a transient step; null = DC (capacitors open) */
  capGeqSiemens: Float64Array | null;
  capVolts: Float64Array; // previous sample's voltage per capacitor
  capAmps: Float64Array; // previous sample's current per capacitor
  extraGminSiemens: number;
}

function sourceResidual(out: Float64Array, x: Float64Array, s: Source, volts: number): void {
  const v = volt(x, s.a) - volt(x, s.b);
  if (s.ohms > 0) {
    const i = (v - volts) / s.ohms;
    addRhs(out, s.a, i);
    addRhs(out, s.b, -i);
  } else {
    const j = x[s.branch]!;
    addRhs(out, s.a, j);
    addRhs(out, s.b, -j);
    out[s.branch] = v - volts;
  }
}

/** Work buffers for one Newton solve, allocated once per simulation. */
class Newton {
  private readonly n: number;
  private readonly jac: Float64Array;
  private readonly f: Float64Array;
  private readonly fTrial: Float64Array;
  private readonly dx: Float64Array;
  private readonly trial: Float64Array;
  private readonly dxBar: Float64Array;
  private readonly perm: Int32Array;
  private readonly cur = new Float64Array(3);
  private readonly curP = new Float64Array(3);
  private readonly curM = new Float64Array(3);
  private readonly dI = new Float64Array(9); // dI[k*3 + j]: d current k / d control voltage j (vgk, vpk, vsk)
  iterations = 0;
  lastMaxUpdate = 0;

  constructor(private readonly c: Circuit) {
    this.n = c.size;
    this.jac = new Float64Array(this.n * this.n);
    this.f = new Float64Array(this.n);
    this.fTrial = new Float64Array(this.n);
    this.dx = new Float64Array(this.n);
    this.trial = new Float64Array(this.n);
    this.dxBar = new Float64Array(this.n);
    this.perm = new Int32Array(this.n);
  }

  /**
   * Solves KCL residual(x) = 0 (a = Jacobian of its linear part) starting from x (overwritten with the solution).
   * Damped Newton (Deuflhard's natural monotonicity test: the simplified Newton step at
   * the trial point, with the old Jacobian, must shrink; halve the damping otherwise),
   * with every step also limited to MAX_STEP_VOLTS. Converged when the full Newton
   * update is below tolerance. Returns false when not converged within maxIter.
   */
  solve(a: Float64Array, st: SolveState, x: Float64Array, maxIter: number): boolean {
    const { n, c, jac, perm, f, dx, dxBar, trial, fTrial } = this;
    this.residual(st, x, f);
    let previousNorm = Infinity;
    let lambda = 1;
    for (let iter = 1; iter <= maxIter; iter++) {
      this.iterations = iter;
      jac.set(a);
      for (const t of c.tubes) this.stampTubeJacobian(t, x);
      luFactor(jac, n, perm);
      for (let r = 0; r < n; r++) dx[r] = -f[r]!;
      luSolve(jac, n, perm, dx);
      let dxNorm = 0;
      let converged = true;
      for (let i = 0; i < n; i++) {
        const d = dx[i]!;
        if (!Number.isFinite(d)) throw new MnaConvergenceError(`mna-reference: non-finite Newton update at unknown ${i}`);
        const ad = Math.abs(d);
        if (i < c.nodeCount) {
          if (ad > dxNorm) dxNorm = ad;
          if (ad > UPDATE_ABS_TOL_VOLTS + UPDATE_REL_TOL * Math.abs(x[i]!)) converged = false;
        } else if (ad > BRANCH_ABS_TOL_AMPS + 1e-9 * Math.abs(x[i]!)) {
          converged = false;
        }
      }
      this.lastMaxUpdate = dxNorm;
      // also accept a round-off floor: update below 1e-9 V that no longer shrinks
      if (!converged && dxNorm < ROUNDOFF_ACCEPT_VOLTS && dxNorm > 0.5 * previousNorm) converged = true;
      previousNorm = dxNorm;
      if (converged) {
        for (let i = 0; i < n; i++) x[i] = x[i]! + dx[i]!;
        return true;
      }
      lambda = Math.min(1, lambda * 4, dxNorm > MAX_STEP_VOLTS ? MAX_STEP_VOLTS / dxNorm : 1);
      for (;;) {
        for (let i = 0; i < n; i++) trial[i] = x[i]! + lambda * dx[i]!;
        this.residual(st, trial, fTrial);
        for (let r = 0; r < n; r++) dxBar[r] = -fTrial[r]!;
        luSolve(jac, n, perm, dxBar);
        let barNorm = 0;
        for (let i = 0; i < c.nodeCount; i++) barNorm = Math.max(barNorm, Math.abs(dxBar[i]!));
        if (barNorm <= (1 - lambda / 4) * dxNorm || !(barNorm > 0) || lambda * dxNorm < UPDATE_ABS_TOL_VOLTS) break;
        lambda *= 0.5;
        if (lambda < 1e-10) return false;
      }
      x.set(trial);
      f.set(fTrial);
    }
    return false;
  }

  /** out = KCL residual (amperes leaving each node into the elements; voltage rows for ideal sources). */
  private residual(st: SolveState, x: Float64Array, out: Float64Array): void {
    const { n, c, cur } = this;
    out.fill(0);
    for (const r of c.resistors) {
      const i = (volt(x, r.a) - volt(x, r.b)) / r.ohms;
      addRhs(out, r.a, i);
      addRhs(out, r.b, -i);
    }
    const geq = st.capGeqSiemens;
    if (geq) {
      c.capacitors.forEach((cap, k) => {
        // trapezoidal companion: i_n = Geq·(v_n - v_{n-1}) - i_{n-1}
        const i = geq[k]! * (volt(x, cap.a) - volt(x, cap.b) - st.capVolts[k]!) - st.capAmps[k]!;
        addRhs(out, cap.a, i);
        addRhs(out, cap.b, -i);
      });
    }
    for (const s of c.dcSources) sourceResidual(out, x, s, st.dcScale * s.volts);
    sourceResidual(out, x, c.input, st.inputVolts);
    for (const i of c.floatingNodes) out[i] = out[i]! + FLOATING_NODE_GMIN_SIEMENS * x[i]!;
    if (st.extraGminSiemens > 0) for (let i = 0; i < c.nodeCount; i++) out[i] = out[i]! + st.extraGminSiemens * x[i]!;
    for (const t of c.tubes) {
      const vk = volt(x, t.cathode);
      tubeCurrents(t, volt(x, t.grid) - vk, volt(x, t.plate) - vk, t.pentode ? volt(x, t.screen) - vk : 0, cur);
      addRhs(out, t.plate, cur[0]!);
      addRhs(out, t.grid, cur[1]!);
      addRhs(out, t.screen, cur[2]!);
      addRhs(out, t.cathode, -(cur[0]! + cur[1]! + cur[2]!));
    }
    for (let r = 0; r < n; r++) {
      if (!Number.isFinite(out[r]!)) throw new MnaConvergenceError(`mna-reference: non-finite residual at unknown ${r}`);
    }
  }

  private stampTubeJacobian(t: Tube, x: Float64Array): void {
    const { n, jac, curP, curM, dI } = this;
    const vk = volt(x, t.cathode);
    const v = [volt(x, t.grid) - vk, volt(x, t.plate) - vk, t.pentode ? volt(x, t.screen) - vk : 0] as const;
    // terminals receiving Ip, Ig, Is (current leaves those nodes into the tube)
    const term = [t.plate, t.grid, t.screen] as const;
    // Jacobian of the tube currents by central finite differences of the spec equations
    const nCtl = t.pentode ? 3 : 2;
    for (let j = 0; j < nCtl; j++) {
      const h = 1e-6 * (1 + Math.abs(v[j]!));
      tubeCurrents(t, v[0] + (j === 0 ? h : 0), v[1] + (j === 1 ? h : 0), v[2] + (j === 2 ? h : 0), curP);
      tubeCurrents(t, v[0] - (j === 0 ? h : 0), v[1] - (j === 1 ? h : 0), v[2] - (j === 2 ? h : 0), curM);
      for (let k = 0; k < 3; k++) dI[k * 3 + j] = (curP[k]! - curM[k]!) / (2 * h);
    }
    const ctlNode = [t.grid, t.plate, t.screen] as const;
    for (let k = 0; k < 3; k++) {
      const rowNode = term[k]!;
      for (let j = 0; j < nCtl; j++) {
        const d = dI[k * 3 + j]!;
        if (d === 0) continue;
        // d/d(v_ctl) = d, d/d(v_cathode) = -d; rows: +at terminal, -at cathode
        addEntry(jac, n, rowNode, ctlNode[j]!, d);
        addEntry(jac, n, rowNode, t.cathode, -d);
        addEntry(jac, n, t.cathode, ctlNode[j]!, -d);
        addEntry(jac, n, t.cathode, t.cathode, d);
      }
    }
  }
}

// ---------------------------------------------------------------- DC operating point
function dcState(c: Circuit, dcScale: number, extraGminSiemens: number): SolveState {
  return { dcScale, inputVolts: 0, capGeqSiemens: null, capVolts: new Float64Array(0), capAmps: new Float64Array(0), extraGminSiemens };
}

/** Source stepping: dc sources ramped from 0 to full with an adaptive step; false if stuck. */
function sourceStep(c: Circuit, newton: Newton, x: Float64Array, extraGmin: number): boolean {
  const a = linearMatrix(c, null, extraGmin);
  let lambda = 0;
  let step = 0.05;
  const trial = new Float64Array(c.size);
  while (lambda < 1) {
    const target = Math.min(1, lambda + step);
    trial.set(x);
    if (newton.solve(a, dcState(c, target, extraGmin), trial, 200)) {
      x.set(trial);
      lambda = target;
      step = Math.min(0.25, step * 1.5);
    } else {
      step /= 4;
      if (step < 1e-6) return false;
    }
  }
  return true;
}

function operatingPointVector(c: Circuit): Float64Array {
  const newton = new Newton(c);
  const x = new Float64Array(c.size);
  if (!sourceStep(c, newton, x, 0)) {
    // gmin stepping: a large shunt from every node to ground, reduced decade by decade
    x.fill(0);
    let g = 1e-2;
    if (!sourceStep(c, newton, x, g)) throw new MnaConvergenceError('mna-reference: DC operating point failed (source stepping and gmin stepping)');
    while (g > 1e-14) {
      g /= 10;
      if (!newton.solve(linearMatrix(c, null, g), dcState(c, 1, g), x, 200)) {
        throw new MnaConvergenceError(`mna-reference: DC operating point failed during gmin stepping at ${g.toExponential(1)} S`);
      }
    }
    if (!newton.solve(linearMatrix(c, null, 0), dcState(c, 1, 0), x, 200)) {
      throw new MnaConvergenceError('mna-reference: DC operating point failed after gmin stepping');
    }
  }
  return x;
}

function tubeReport(c: Circuit, x: Float64Array): Record<string, TubeOperatingPoint> {
  const tubes: Record<string, TubeOperatingPoint> = {};
  const cur = new Float64Array(3);
  for (const t of c.tubes) {
    const vk = volt(x, t.cathode);
    const vpk = volt(x, t.plate) - vk;
    tubeCurrents(t, volt(x, t.grid) - vk, vpk, t.pentode ? volt(x, t.screen) - vk : 0, cur);
    tubes[t.id] = { plateAmps: cur[0]!, gridAmps: cur[1]!, screenAmps: cur[2]!, plateWatts: cur[0]! * vpk };
  }
  return tubes;
}

/** DC operating point: capacitors open, input source at 0 V. */
export function solveOperatingPoint(netlist: unknown): OperatingPoint {
  const c = parseNetlist(netlist);
  const x = operatingPointVector(c);
  const nodes: Record<string, number> = { [c.ground]: 0 };
  c.nodeNames.forEach((name, i) => {
    nodes[name] = x[i]!;
  });
  return { nodes, tubes: tubeReport(c, x) };
}

// ---------------------------------------------------------------- transient
/**
 * Transient simulation from the DC operating point. input[n] (volts) drives the input
 * source at t = n / sampleRateHz; output[n] is the output node's voltage at that time.
 */
export function simulateNetlist(netlist: unknown, input: Float64Array, sampleRateHz: number, options: SimulationOptions = {}): SimulationResult {
  if (!(input instanceof Float64Array)) throw new Error('simulateNetlist: input must be a Float64Array of volts');
  if (!Number.isFinite(sampleRateHz) || !(sampleRateHz > 0)) throw new Error(`simulateNetlist: sampleRateHz must be a positive number, got ${sampleRateHz}`);
  for (let i = 0; i < input.length; i++) {
    if (!Number.isFinite(input[i]!)) throw new Error(`simulateNetlist: input sample ${i} is not finite`);
  }
  const maxIter = options.maxNewtonIterations ?? 100;
  if (!Number.isInteger(maxIter) || maxIter < 1) throw new Error(`simulateNetlist: maxNewtonIterations must be a positive integer, got ${maxIter}`);
  const c = parseNetlist(netlist);
  const recordNames = options.nodes === 'all' ? [c.ground, ...c.nodeNames] : [...(options.nodes ?? [])];
  const record = recordNames.map((name) => {
    const i = c.nodeIndex.get(name);
    if (i === undefined) throw new Error(`simulateNetlist: unknown node "${name}" in options.nodes`);
    return i;
  });

  const x = operatingPointVector(c);
  const periodSeconds = 1 / sampleRateHz;
  const geq = Float64Array.from(c.capacitors, (cap) => (2 * cap.farads) / periodSeconds);
  const a = linearMatrix(c, geq, 0);
  // trapezoidal companion: i_n = Geq·(v_n - v_{n-1}) - i_{n-1}; starts at DC (i = 0)
  const capVolts = Float64Array.from(c.capacitors, (cap) => volt(x, cap.a) - volt(x, cap.b));
  const capAmps = new Float64Array(c.capacitors.length);
  const st: SolveState = { dcScale: 1, inputVolts: 0, capGeqSiemens: geq, capVolts, capAmps, extraGminSiemens: 0 };
  const newton = new Newton(c);

  const cont = new Continuation(c, st);
  const forced = options.continuationSteps ?? 0;
  if (!Number.isInteger(forced) || forced < 0) throw new Error(`simulateNetlist: continuationSteps must be a non-negative integer, got ${forced}`);
  let continuationSamples = 0;
  const output = new Float64Array(input.length);
  const nodes: Record<string, Float64Array> = {};
  const traces = recordNames.map((name) => (nodes[name] = new Float64Array(input.length)));

  let totalIterations = 0;
  let maxIterations = 0;
  for (let step = 0; step < input.length; step++) {
    st.inputVolts = input[step]!;
    cont.beginStep(x);
    let ok = forced > 0 ? cont.solve(newton, a, x, maxIter, forced) : newton.solve(a, st, x, maxIter);
    if (!ok && forced === 0) {
      ok = cont.solve(newton, a, x, maxIter, 2);
      if (ok) continuationSamples++;
    }
    if (!ok) {
      throw new MnaConvergenceError(
        `mna-reference: Newton did not converge at sample ${step} (t = ${(step * periodSeconds).toExponential(4)} s) after ${maxIter} iterations, nor by continuation; last update ${newton.lastMaxUpdate.toExponential(3)} V`,
      );
    }
    cont.endStep(x);
    totalIterations += newton.iterations;
    maxIterations = Math.max(maxIterations, newton.iterations);
    c.capacitors.forEach((cap, k) => {
      const v = volt(x, cap.a) - volt(x, cap.b);
      capAmps[k] = geq[k]! * (v - capVolts[k]!) - capAmps[k]!;
      capVolts[k] = v;
    });
    output[step] = volt(x, c.output);
    record.forEach((i, r) => {
      traces[r]![step] = volt(x, i);
    });
  }
  return { output, nodes, newtonIterations: { total: totalIterations, maxPerSample: maxIterations }, continuationSamples };
}

// ---------------------------------------------------------------- continuation fallback
/**
 * Natural-parameter continuation for one time step whose plain Newton solve failed. Everything
 * that changes from one step's equations to the next (the input source and each capacitor's
 * trapezoidal companion history, volts and amps) is moved along a straight line from the values
 * that the previous step's solution satisfies (lambda = 0) to this step's (lambda = 1); the
 * solution is followed with Newton from lambda = 0, the step in lambda halved after a failure
 * and doubled after a success, down to 2^-24. Only lambda = 1 is kept, so the result is the
 * same trapezoidal-rule solution plain Newton would have found; the path only supplies starting
 * points. (Continuation methods: Allgower & Georg, "Introduction to numerical continuation
 * methods", SIAM 2003, ch. 1; from memory.)
 */
class Continuation {
  private readonly prevInput: { volts: number } = { volts: 0 };
  private readonly prevCapVolts: Float64Array;
  private readonly prevCapAmps: Float64Array;
  private readonly lastCapVolts: Float64Array;
  private readonly lastCapAmps: Float64Array;
  private lastInputVolts = 0;
  private readonly xStart: Float64Array;
  private readonly xGood: Float64Array;
  private readonly trial: SolveState;
  private first = true;

  constructor(
    private readonly c: Circuit,
    private readonly st: SolveState,
  ) {
    const nc = c.capacitors.length;
    this.prevCapVolts = Float64Array.from(st.capVolts);
    this.prevCapAmps = Float64Array.from(st.capAmps);
    this.lastCapVolts = Float64Array.from(st.capVolts);
    this.lastCapAmps = Float64Array.from(st.capAmps);
    this.xStart = new Float64Array(c.size);
    this.xGood = new Float64Array(c.size);
    this.trial = { ...st, capVolts: new Float64Array(nc), capAmps: new Float64Array(nc) };
  }

  /** Before a step: x is the previous step's solution, which solves the previous equations. */
  beginStep(x: Float64Array): void {
    this.xStart.set(x);
    if (this.first) {
      // the operating point: it solves the first step's equations at the input's rest value 0
      this.prevInput.volts = 0;
      this.prevCapVolts.set(this.st.capVolts);
      this.prevCapAmps.set(this.st.capAmps);
      this.first = false;
    } else {
      this.prevInput.volts = this.lastInputVolts;
      this.prevCapVolts.set(this.lastCapVolts);
      this.prevCapAmps.set(this.lastCapAmps);
    }
  }

  /** After a step: remember the equations it solved (they are the next step's lambda = 0). */
  endStep(_x: Float64Array): void {
    this.lastInputVolts = this.st.inputVolts;
    this.lastCapVolts.set(this.st.capVolts);
    this.lastCapAmps.set(this.st.capAmps);
  }

  /** Solve the present step into x by continuation; at least `minSteps` sub-steps. */
  solve(newton: Newton, a: Float64Array, x: Float64Array, maxIter: number, minSteps: number): boolean {
    const st = this.st,
      tr = this.trial,
      nc = this.c.capacitors.length;
    const set = (lambda: number): void => {
      tr.inputVolts = this.prevInput.volts + lambda * (st.inputVolts - this.prevInput.volts);
      for (let k = 0; k < nc; k++) {
        tr.capVolts[k] = this.prevCapVolts[k]! + lambda * (st.capVolts[k]! - this.prevCapVolts[k]!);
        tr.capAmps[k] = this.prevCapAmps[k]! + lambda * (st.capAmps[k]! - this.prevCapAmps[k]!);
      }
    };
    this.xGood.set(this.xStart);
    let lambda = 0;
    let h = 1 / minSteps;
    while (lambda < 1) {
      const target = Math.min(1, lambda + h);
      set(target);
      x.set(this.xGood);
      if (newton.solve(a, target === 1 ? st : tr, x, maxIter)) {
        lambda = target;
        this.xGood.set(x);
        h = Math.min(2 * h, 1 / minSteps);
      } else {
        h /= 2;
        if (h < 2 ** -24) return false;
      }
    }
    x.set(this.xGood);
    return true;
  }
}
