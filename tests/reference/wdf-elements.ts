// A small classical wave-digital-filter library, for tests only: every element shares one wave
// interface, series and parallel three-port adaptors build a tree, and a value change
// propagates port resistances up to the root. Voltage waves a = v + R i, b = v - R i
// (Fettweis, "Wave digital filters: theory and practice", Proc. IEEE 74(2), 1986; cited from
// memory, equation numbers not checked). Here `a` is the wave arriving at an element from its
// parent, `b` the wave it sends back.
//
// The engine (src/dsp/circuit/engine.ts) does not use it: it absorbs every resistor and tube port
// into one R-type root solved by nodal analysis, with the capacitors and sources as wave leaves.
// This adaptor-tree formulation is an independent route to the same discrete circuit, which
// tests/wdf.test.ts compares with the engine. Shares no code with src/.

/** Inverse of an n x n matrix by Gauss-Jordan elimination with partial pivoting (any numerical-methods text). */
function invert(m: Float64Array, n: number): Float64Array {
  const a = Float64Array.from(m),
    inv = new Float64Array(n * n);
  for (let i = 0; i < n; i++) inv[i * n + i] = 1;
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(a[r * n + c]!) > Math.abs(a[p * n + c]!)) p = r;
    if (!(Math.abs(a[p * n + c]!) > 1e-300)) throw new Error(`singular matrix at column ${c}`);
    for (let k = 0; k < n; k++) {
      let t = a[c * n + k]!;
      a[c * n + k] = a[p * n + k]!;
      a[p * n + k] = t;
      t = inv[c * n + k]!;
      inv[c * n + k] = inv[p * n + k]!;
      inv[p * n + k] = t;
    }
    const d = 1 / a[c * n + c]!;
    for (let k = 0; k < n; k++) {
      a[c * n + k]! *= d;
      inv[c * n + k]! *= d;
    }
    for (let r = 0; r < n; r++) {
      if (r === c) continue;
      const f = a[r * n + c]!;
      if (f === 0) continue;
      for (let k = 0; k < n; k++) {
        a[r * n + k]! -= f * a[c * n + k]!;
        inv[r * n + k]! -= f * inv[c * n + k]!;
      }
    }
  }
  return inv;
}

/** The one wave interface. */
export interface WaveNode {
  /** Port resistance seen by the parent, ohms. */
  readonly portOhms: number;
  /** Reflected wave b (computed from the element's state and its children). */
  reflect(): number;
  /** Incident wave a from the parent (updates state and children). */
  accept(a: number): void;
  /** Set by the adaptor that owns this port. */
  parent: { childChanged(): void } | null;
  /** Port voltage and current (into the element) after the last accept. */
  readonly volts: number;
  readonly amps: number;
}

abstract class Leaf implements WaveNode {
  parent: { childChanged(): void } | null = null;
  protected a = 0;
  protected b = 0;
  abstract readonly portOhms: number;
  abstract reflect(): number;
  accept(a: number): void {
    this.a = a;
  }
  get volts(): number {
    return (this.a + this.b) / 2;
  }
  get amps(): number {
    return (this.a - this.b) / (2 * this.portOhms);
  }
  protected changed(): void {
    this.parent?.childChanged();
  }
}

/** Adapted resistor: b = 0 (Fettweis 1986, resistor with R_port = R). */
export class Resistor extends Leaf {
  constructor(private ohms: number) {
    super();
  }
  get portOhms(): number {
    return this.ohms;
  }
  setOhms(ohms: number): void {
    this.ohms = ohms;
    this.changed();
  }
  reflect(): number {
    this.b = 0;
    return 0;
  }
}

/**
 * Capacitor by the trapezoidal rule / bilinear transform: R = T/(2C), b[n] = a[n-1]
 * (Fettweis 1986). A value change keeps the capacitor's voltage and current: the next b is
 * v + R_new·i, so nothing clicks.
 */
export class Capacitor extends Leaf {
  private ohms: number;
  private state = 0;
  constructor(
    private farads: number,
    private sampleRateHz: number,
  ) {
    super();
    this.ohms = 1 / (2 * farads * sampleRateHz);
  }
  get portOhms(): number {
    return this.ohms;
  }
  setFarads(farads: number): void {
    const v = this.volts,
      i = this.amps;
    this.farads = farads;
    this.ohms = 1 / (2 * farads * this.sampleRateHz);
    this.state = v + this.ohms * i;
    this.b = v - this.ohms * i; // keeps volts/amps readable until the next sample
    this.a = this.state;
    this.changed();
  }
  /** Start at a DC voltage (no current). */
  setVolts(v: number): void {
    this.state = v;
    this.a = v;
    this.b = v;
  }
  reflect(): number {
    this.b = this.state;
    return this.b;
  }
  override accept(a: number): void {
    this.a = a;
    this.state = a;
  }
}

/** Resistive voltage source: EMF behind a series resistance, b = Vs. */
export class ResistiveVoltageSource extends Leaf {
  constructor(
    public emfVolts: number,
    private ohms: number,
  ) {
    super();
  }
  get portOhms(): number {
    return this.ohms;
  }
  setOhms(ohms: number): void {
    this.ohms = ohms;
    this.changed();
  }
  reflect(): number {
    this.b = this.emfVolts;
    return this.b;
  }
}

/** A root element (not adapted): reflects in response to the wave from its single child. */
export interface RootOnePort {
  /** Given the child's reflected wave and port resistance, the wave sent back. */
  respond(aFromChild: number, childOhms: number): number;
}

/** Ideal voltage source at the root: b = 2 Vs - a. */
export class IdealVoltageSource implements RootOnePort {
  constructor(public emfVolts: number) {}
  respond(a: number): number {
    return 2 * this.emfVolts - a;
  }
}

/** Ideal switch at the root: closed (v = 0) b = -a; open (i = 0) b = a. */
export class Switch implements RootOnePort {
  constructor(public closed: boolean) {}
  respond(a: number): number {
    return this.closed ? -a : a;
  }
}

abstract class Adaptor implements WaveNode {
  parent: { childChanged(): void } | null = null;
  protected a = 0;
  protected bUp = 0;
  abstract readonly portOhms: number;
  constructor(
    protected readonly left: WaveNode,
    protected readonly right: WaveNode,
  ) {
    left.parent = this;
    right.parent = this;
  }
  abstract reflect(): number;
  abstract accept(a: number): void;
  /** A child's port resistance changed: recompute ours and tell our parent. */
  childChanged(): void {
    this.parent?.childChanged();
  }
  get volts(): number {
    return (this.a + this.bUp) / 2;
  }
  get amps(): number {
    return (this.a - this.bUp) / (2 * this.portOhms);
  }
}

/**
 * Three-port series adaptor, up port adapted: R3 = R1 + R2. Written with the composite's own
 * polarity (v3 = v1 + v2, one current through all), so b3 = a1 + a2 and each child receives
 * a_k + (R_k/R3)(a3 - b3); Fettweis's form b3 = -(a1 + a2) is the same with port 3 reversed.
 */
export class SeriesAdaptor extends Adaptor {
  private a1 = 0;
  private a2 = 0;
  get portOhms(): number {
    return this.left.portOhms + this.right.portOhms;
  }
  reflect(): number {
    this.a1 = this.left.reflect();
    this.a2 = this.right.reflect();
    this.bUp = this.a1 + this.a2;
    return this.bUp;
  }
  accept(a: number): void {
    this.a = a;
    const k = (a - this.bUp) / this.portOhms;
    this.left.accept(this.a1 + this.left.portOhms * k);
    this.right.accept(this.a2 + this.right.portOhms * k);
  }
}

/** Three-port parallel adaptor, port 3 adapted: G3 = G1 + G2, b3 = (G1 a1 + G2 a2)/G3, b_k = a3 + b3 - a_k. */
export class ParallelAdaptor extends Adaptor {
  private a1 = 0;
  private a2 = 0;
  get portOhms(): number {
    return 1 / (1 / this.left.portOhms + 1 / this.right.portOhms);
  }
  reflect(): number {
    this.a1 = this.left.reflect();
    this.a2 = this.right.reflect();
    const g1 = 1 / this.left.portOhms,
      g2 = 1 / this.right.portOhms;
    this.bUp = (g1 * this.a1 + g2 * this.a2) / (g1 + g2);
    return this.bUp;
  }
  accept(a: number): void {
    this.a = a;
    const t = a + this.bUp;
    this.left.accept(t - this.a1);
    this.right.accept(t - this.a2);
  }
}

/** A tree with one unadapted element at its root. */
export class WdfTree {
  constructor(
    private readonly root: RootOnePort,
    private readonly child: WaveNode,
  ) {
    child.parent = { childChanged: () => undefined };
  }
  /** One sample: waves up the tree, the root's response back down. */
  step(): void {
    const b = this.child.reflect();
    this.child.accept(this.root.respond(b, this.child.portOhms));
  }
}

/**
 * R-type adaptor for topologies that are not series-parallel, at the root. Each port j is a
 * Thevenin source a_j behind its port resistance R_j attached to the internal topology; the
 * scattering matrix is S = I + 2·[0 R]·X⁻¹·[0 I]ᵀ with X the MNA matrix of that network
 * (Werner, Smith & Abel, "Wave digital filter adaptors for arbitrary topologies and multiport
 * linear elements", DAFx-15). Recomputed whenever a child's port resistance changes.
 */
export class RTypeRoot {
  private S: Float64Array = new Float64Array(0);
  private readonly aIn: Float64Array;
  private readonly bOut: Float64Array;

  /**
   * @param nodeCount internal nodes (ground excluded; index -1 is ground)
   * @param ports each child with the two internal nodes its port connects (+ at `a`)
   */
  constructor(
    private readonly nodeCount: number,
    private readonly ports: readonly { readonly child: WaveNode; readonly a: number; readonly b: number }[],
  ) {
    this.aIn = new Float64Array(ports.length);
    this.bOut = new Float64Array(ports.length);
    for (const p of ports) p.child.parent = this;
    this.childChanged();
  }

  /** Scattering matrix (row-major, ports x ports), for inspection. */
  get scattering(): Float64Array {
    return this.S;
  }

  childChanged(): void {
    const n = this.nodeCount,
      np = this.ports.length;
    // Unknowns: node voltages (n), the Thevenin internal nodes (np), source currents (np).
    const D = n + 2 * np;
    const X = new Float64Array(D * D);
    const add = (r: number, c: number, v: number) => {
      if (r >= 0 && c >= 0) X[r * D + c]! += v;
    };
    this.ports.forEach((p, j) => {
      const t = n + j; // node between the source and the port resistance
      const g = 1 / p.child.portOhms;
      add(t, t, g);
      add(p.a, p.a, g);
      add(t, p.a, -g);
      add(p.a, t, -g);
      const row = n + np + j; // source: v_t - v_b = a_j, current i_j flows from b through the source to t
      add(row, t, 1);
      add(row, p.b, -1);
      add(t, row, 1);
      add(p.b, row, -1);
    });
    for (let k = 0; k < n; k++) X[k * D + k]! += 1e-15; // keeps an isolated internal node defined
    const Xi = invert(X, D);
    // b = a - 2 R i_port where i_port is the current into the child = minus the source current
    // into node t... expressed as S = I + 2 R (rows of source currents of X⁻¹) (columns of sources).
    this.S = new Float64Array(np * np);
    for (let r = 0; r < np; r++) {
      const R = this.ports[r]!.child.portOhms;
      for (let c = 0; c < np; c++) {
        const x = Xi[(n + np + r) * D + (n + np + c)]!;
        this.S[r * np + c] = (r === c ? 1 : 0) + 2 * R * x;
      }
    }
  }

  step(): void {
    const np = this.ports.length;
    for (let j = 0; j < np; j++) this.aIn[j] = this.ports[j]!.child.reflect();
    for (let r = 0; r < np; r++) {
      let s = 0;
      for (let c = 0; c < np; c++) s += this.S[r * np + c]! * this.aIn[c]!;
      this.bOut[r] = s;
    }
    for (let j = 0; j < np; j++) this.ports[j]!.child.accept(this.bOut[j]!);
  }
}
