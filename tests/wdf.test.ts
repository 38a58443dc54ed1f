// A classical adaptor-tree WDF (tests/reference/wdf-elements.ts) against analytic results
// (the bilinear transform of the analog transfer function: a WDF capacitor is the trapezoidal
// rule, Fettweis 1986; nodal analysis), and the engine (one R-type root holding every resistor,
// capacitors as wave leaves) against that adaptor tree on a series-parallel circuit.
import { describe, expect, it } from 'vitest';
import { CircuitEngine } from '../src/dsp/circuit/engine.ts';
import type { Netlist } from '../src/dsp/circuit/netlist.ts';
import {
  Capacitor,
  IdealVoltageSource,
  ParallelAdaptor,
  Resistor,
  ResistiveVoltageSource,
  RTypeRoot,
  SeriesAdaptor,
  WdfTree,
} from './reference/wdf-elements.ts';

const fs = 48000;

/** First-order section from the bilinear transform: H(s) = (c1 s + c0)/(d1 s + d0), s = 2fs(1-z^-1)/(1+z^-1). */
function bilinearFirstOrder(c1: number, c0: number, d1: number, d0: number): (x: Float64Array) => Float64Array {
  const K = 2 * fs;
  const b0 = c1 * K + c0,
    b1 = -c1 * K + c0,
    a0 = d1 * K + d0,
    a1 = -d1 * K + d0;
  return (x) => {
    const y = new Float64Array(x.length);
    let x1 = 0,
      y1 = 0;
    for (let n = 0; n < x.length; n++) {
      y[n] = (b0 * x[n]! + b1 * x1 - a1 * y1) / a0;
      x1 = x[n]!;
      y1 = y[n]!;
    }
    return y;
  };
}

function noise(n: number, seed = 1): Float64Array {
  let s = seed;
  const x = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    s = (s * 1103515245 + 12345) % 2147483648;
    x[k] = s / 2147483648 - 0.5;
  }
  return x;
}

function rcCircuit(R: number, C: number) {
  const r = new Resistor(R);
  const c = new Capacitor(C, fs);
  const src = new IdealVoltageSource(0);
  const tree = new WdfTree(src, new SeriesAdaptor(r, c));
  return { r, c, src, tree };
}

describe('RC filters against the bilinear transform of the analog response', () => {
  const R = 10e3,
    C = 22e-9; // corner 723 Hz
  it('low-pass: capacitor voltage equals 1/(1 + sRC) under the bilinear transform', () => {
    const { c, src, tree } = rcCircuit(R, C);
    const x = noise(4000);
    const ref = bilinearFirstOrder(0, 1, R * C, 1)(x);
    let maxErr = 0;
    for (let n = 0; n < x.length; n++) {
      src.emfVolts = x[n]!;
      tree.step();
      maxErr = Math.max(maxErr, Math.abs(c.volts - ref[n]!));
    }
    expect(maxErr).toBeLessThan(1e-12);
  });
  it('high-pass: resistor voltage equals sRC/(1 + sRC)', () => {
    const { r, src, tree } = rcCircuit(R, C);
    const x = noise(4000, 7);
    const ref = bilinearFirstOrder(R * C, 0, R * C, 1)(x);
    let maxErr = 0;
    for (let n = 0; n < x.length; n++) {
      src.emfVolts = x[n]!;
      tree.step();
      maxErr = Math.max(maxErr, Math.abs(r.volts - ref[n]!));
    }
    expect(maxErr).toBeLessThan(1e-12);
  });
  it('a capacitor value change keeps its voltage (no step) and then follows the new corner', () => {
    const { c, src, tree } = rcCircuit(R, C);
    src.emfVolts = 1;
    for (let n = 0; n < 20000; n++) tree.step();
    const before = c.volts;
    c.setFarads(4.7e-9);
    tree.step();
    expect(Math.abs(c.volts - before)).toBeLessThan(1e-9); // charged to 1 V: stays there
    // a new step is followed with the new time constant: after one RC the response is 1 - 1/e (analog, within warping)
    src.emfVolts = 0;
    const tau = R * 4.7e-9;
    const n = Math.round(tau * fs * 10); // 10 tau
    for (let k = 0; k < n; k++) tree.step();
    expect(Math.abs(c.volts)).toBeLessThan(1e-3);
  });
});

describe("resistive divider (Ohm's law)", () => {
  it('series pair: V·R2/(R1+R2), parallel load reduces it as nodal analysis says', () => {
    const r1 = new Resistor(10e3),
      r2 = new Resistor(4.7e3);
    const src = new IdealVoltageSource(3);
    new WdfTree(src, new SeriesAdaptor(r1, r2)).step();
    expect(r2.volts).toBeCloseTo((3 * 4.7e3) / 14.7e3, 12);
    const a = new Resistor(10e3),
      b = new Resistor(4.7e3),
      load = new Resistor(22e3);
    const s2 = new IdealVoltageSource(3);
    const tree = new WdfTree(s2, new SeriesAdaptor(a, new ParallelAdaptor(b, load)));
    tree.step();
    const rp = 1 / (1 / 4.7e3 + 1 / 22e3);
    expect(load.volts).toBeCloseTo((3 * rp) / (10e3 + rp), 12);
    // a resistor change propagates port resistances to the root
    b.setOhms(10e3);
    tree.step();
    const rp2 = 1 / (1 / 10e3 + 1 / 22e3);
    expect(load.volts).toBeCloseTo((3 * rp2) / (10e3 + rp2), 12);
  });
});

describe('R-type adaptor: bridged-T network (not series-parallel)', () => {
  // Bridged-T: C1 in-m, C2 m-out, R1 in-out (bridge), R2 m-ground; source Rs; load RL.
  const Rs = 1,
    R1 = 10e3,
    R2 = 1e3,
    C = 10e-9,
    RL = 1e8;
  /** Nodal analysis at complex frequency s (reference, solved by Cramer's rule for 3 nodes). */
  function nodal(s: { re: number; im: number }): { re: number; im: number } {
    type Cx = { re: number; im: number };
    const c = (re: number, im = 0): Cx => ({ re, im });
    const add = (a: Cx, b: Cx): Cx => c(a.re + b.re, a.im + b.im);
    const sub = (a: Cx, b: Cx): Cx => c(a.re - b.re, a.im - b.im);
    const mul = (a: Cx, b: Cx): Cx => c(a.re * b.re - a.im * b.im, a.re * b.im + a.im * b.re);
    const div = (a: Cx, b: Cx): Cx => {
      const d = b.re * b.re + b.im * b.im;
      return c((a.re * b.re + a.im * b.im) / d, (a.im * b.re - a.re * b.im) / d);
    };
    const sC = mul(s, c(C));
    const gs = c(1 / Rs),
      g1 = c(1 / R1),
      g2 = c(1 / R2),
      gl = c(1 / RL);
    // unknowns [vin, vm, vo]; source 1 V through Rs into vin
    const A = [
      [add(add(gs, g1), sC), c(-sC.re, -sC.im), c(-g1.re)],
      [c(-sC.re, -sC.im), add(add(sC, sC), g2), c(-sC.re, -sC.im)],
      [c(-g1.re), c(-sC.re, -sC.im), add(add(g1, sC), gl)],
    ];
    const b = [gs, c(0), c(0)];
    const det3 = (M: Cx[][]) => {
      const m = (r: number, k: number) => M[r]![k]!;
      return sub(
        add(mul(m(0, 0), sub(mul(m(1, 1), m(2, 2)), mul(m(1, 2), m(2, 1)))), mul(m(0, 2), sub(mul(m(1, 0), m(2, 1)), mul(m(1, 1), m(2, 0))))),
        mul(m(0, 1), sub(mul(m(1, 0), m(2, 2)), mul(m(1, 2), m(2, 0)))),
      );
    };
    const A3 = A.map((row, r) => row.map((v, k) => (k === 2 ? b[r]! : v)));
    return div(det3(A3), det3(A));
  }

  it('its frequency response equals the nodal transfer function at bilinear-warped frequencies', () => {
    const src = new ResistiveVoltageSource(0, Rs);
    const c1 = new Capacitor(C, fs),
      c2 = new Capacitor(C, fs);
    const r1 = new Resistor(R1),
      r2 = new Resistor(R2),
      rl = new Resistor(RL);
    // internal nodes: 0 = in, 1 = m, 2 = out; -1 ground
    const root = new RTypeRoot(3, [
      { child: src, a: 0, b: -1 },
      { child: c1, a: 0, b: 1 },
      { child: c2, a: 1, b: 2 },
      { child: r1, a: 0, b: 2 },
      { child: r2, a: 1, b: -1 },
      { child: rl, a: 2, b: -1 },
    ]);
    const N = 16384;
    const h = new Float64Array(N);
    for (let n = 0; n < N; n++) {
      src.emfVolts = n === 0 ? 1 : 0;
      root.step();
      h[n] = rl.volts;
    }
    for (const f of [50, 300, 1000, 1600, 3000, 8000, 15000]) {
      const w = (2 * Math.PI * f) / fs;
      let re = 0,
        im = 0;
      for (let n = 0; n < N; n++) {
        re += h[n]! * Math.cos(w * n);
        im -= h[n]! * Math.sin(w * n);
      }
      const ref = nodal({ re: 0, im: 2 * fs * Math.tan(w / 2) });
      const magDb = 10 * Math.log10(re * re + im * im);
      const refDb = 10 * Math.log10(ref.re * ref.re + ref.im * ref.im);
      expect(Math.abs(magDb - refDb)).toBeLessThan(1e-6);
      expect(Math.abs(Math.atan2(im, re) - Math.atan2(ref.im, ref.re))).toBeLessThan(1e-6);
    }
  });

  it('the nodal reference agrees with the textbook closed form of the unloaded bridged-T', () => {
    // H(s) = (s²C²R1R2 + 2sCR2 + 1) / (s²C²R1R2 + sC(R1 + 2R2) + 1), ideal source, no load (common handbook result)
    for (const f of [100, 1000, 5000]) {
      const w = 2 * Math.PI * f;
      const num = { re: 1 - w * w * C * C * R1 * R2, im: 2 * w * C * R2 };
      const den = { re: 1 - w * w * C * C * R1 * R2, im: w * C * (R1 + 2 * R2) };
      const closed = Math.hypot(num.re, num.im) / Math.hypot(den.re, den.im);
      const n = nodal({ re: 0, im: w });
      expect(Math.abs(Math.hypot(n.re, n.im) - closed) / closed).toBeLessThan(1e-3); // Rs = 1 Ω, RL = 100 MΩ
    }
  });

  it('changing a child resistance recomputes the scattering matrix', () => {
    const src = new ResistiveVoltageSource(1, 100);
    const ra = new Resistor(1000),
      rb = new Resistor(1000);
    const root = new RTypeRoot(1, [
      { child: src, a: 0, b: -1 },
      { child: ra, a: 0, b: -1 },
      { child: rb, a: 0, b: -1 },
    ]);
    root.step();
    expect(ra.volts).toBeCloseTo((1 * 500) / 600, 9);
    rb.setOhms(250);
    root.step();
    const rp = 1 / (1 / 1000 + 1 / 250);
    expect(ra.volts).toBeCloseTo(rp / (100 + rp), 9);
  });
});

describe('the engine against an adaptor tree of the same series-parallel circuit', () => {
  // source (EMF behind 4.7 k) - C1 100 n in series - node a: R1 47 k || C2 4.7 n || (R2 10 k in
  // series with C3 22 n) || RL 100 k; output: the voltage across RL (invented values).
  const Rs = 4.7e3,
    C1 = 100e-9,
    R1 = 47e3,
    C2 = 4.7e-9,
    R2 = 10e3,
    C3 = 22e-9,
    RL = 100e3;
  const netlist: Netlist = {
    schema: 'valvewright.netlist.v1',
    ground: '0',
    input: { node: 'in', ohms: Rs },
    output: { node: 'a' },
    elements: [
      { id: 'C1', kind: 'capacitor', nodes: ['in', 'a'], farads: C1 },
      { id: 'R1', kind: 'resistor', nodes: ['a', '0'], ohms: R1 },
      { id: 'C2', kind: 'capacitor', nodes: ['a', '0'], farads: C2 },
      { id: 'R2', kind: 'resistor', nodes: ['a', 'b'], ohms: R2 },
      { id: 'C3', kind: 'capacitor', nodes: ['b', '0'], farads: C3 },
      { id: 'RL', kind: 'resistor', nodes: ['a', '0'], ohms: RL },
    ],
  };

  // The engine adds 1e-12 S from every node to ground (so that a node without a DC path stays
  // defined): against node impedances under 100 k that is a relative difference under 1e-7.
  it('sample for sample on noise, and after a resistor and a capacitor change, within 1e-7 of the signal', () => {
    const src = new IdealVoltageSource(0),
      rs = new Resistor(Rs);
    const c1 = new Capacitor(C1, fs),
      r1 = new Resistor(R1),
      c2 = new Capacitor(C2, fs),
      r2 = new Resistor(R2),
      c3 = new Capacitor(C3, fs),
      rl = new Resistor(RL);
    // the tree: the source at the root drives Rs - C1 - (the shunt network) in series
    const shunt = new ParallelAdaptor(new ParallelAdaptor(r1, c2), new ParallelAdaptor(new SeriesAdaptor(r2, c3), rl));
    const tree = new WdfTree(src, new SeriesAdaptor(rs, new SeriesAdaptor(c1, shunt)));
    const engine = new CircuitEngine(netlist, fs, { antialiasing: 'off' });
    const x = noise(6000, 3);
    let worst = 0,
      peak = 0;
    for (let n = 0; n < x.length; n++) {
      if (n === 2000) {
        r1.setOhms(22e3);
        engine.setValues([{ id: 'R1', value: 22e3 }]);
      }
      if (n === 4000) {
        c3.setFarads(47e-9);
        engine.setValues([{ id: 'C3', value: 47e-9 }]);
      }
      src.emfVolts = x[n]!;
      tree.step();
      const y = engine.processSample(x[n]!);
      worst = Math.max(worst, Math.abs(y - rl.volts));
      peak = Math.max(peak, Math.abs(rl.volts));
    }
    expect(peak).toBeGreaterThan(0.05);
    expect(worst).toBeLessThan(1e-7 * peak);
  });
});
