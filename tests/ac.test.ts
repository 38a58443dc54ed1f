// Small-signal AC analysis against analytic results: a first-order RC (textbook response
// H = 1/(1 + j·w·R·C)) and the triode gain formulas (an electronics textbook's vacuum-tube chapter, textbook chapter,
// confirmed): bypassed A = mu·Rac/(rp + Rac), unbypassed A = mu·Rac/(rp + Rac + (mu+1)·Rk),
// with mu and rp from the Koren model's own derivatives at the operating point.
import { describe, expect, it } from 'vitest';
import { acAnalysis, identifyToneNetwork, logFrequencies, toneNetworkAc } from '../src/dsp/analysis/ac.ts';
import { tubeSmallSignal } from '../src/dsp/analysis/linear.ts';
import { CircuitEngine } from '../src/dsp/circuit/engine.ts';
import { designCircuit, potResistors, type PotPart } from '../src/dsp/circuit/design.ts';
import { NETLIST_SCHEMA, type Netlist, type NetTriode } from '../src/dsp/circuit/netlist.ts';
import { TRIODE_INTO_TRIODE } from '../src/dsp/circuit/templates.ts';
import { korenTriode, newSlopes } from '../src/dsp/tubes/models.ts';

const KOREN_12AX7 = { name: 'koren-triode', mu: 100, ex: 1.4, kg1: 1060, kp: 600, kvb: 300 } as const; // Koren 1996 set (Koren 1996, published triode set, confirmed)

describe('plain RC low-pass', () => {
  it('matches 1/(1 + j w R C) in magnitude and phase from 20 Hz to 20 kHz', () => {
    const R = 10e3,
      C = 10e-9;
    const n: Netlist = {
      schema: NETLIST_SCHEMA,
      ground: '0',
      input: { node: 'a', ohms: R },
      output: { node: 'a' },
      elements: [{ id: 'C1', kind: 'capacitor', nodes: ['a', '0'], farads: C }],
    };
    const r = acAnalysis(n);
    r.frequenciesHz.forEach((f, i) => {
      const wrc = 2 * Math.PI * f * R * C;
      expect(r.magnitudeDb[i]!).toBeCloseTo(-10 * Math.log10(1 + wrc * wrc), 6);
      expect(r.phaseDeg[i]!).toBeCloseTo((-Math.atan(wrc) * 180) / Math.PI, 6);
    });
    expect(r.frequenciesHz[0]).toBeCloseTo(20, 9);
    expect(r.frequenciesHz[r.frequenciesHz.length - 1]).toBeCloseTo(20000, 6);
  });
  it('RC high-pass: j w R C / (1 + j w R C)', () => {
    const R = 100e3,
      C = 22e-9;
    const n: Netlist = {
      schema: NETLIST_SCHEMA,
      ground: '0',
      input: { node: 'a', ohms: 0 },
      output: { node: 'b' },
      elements: [
        { id: 'C1', kind: 'capacitor', nodes: ['a', 'b'], farads: C },
        { id: 'R1', kind: 'resistor', nodes: ['b', '0'], ohms: R },
      ],
    };
    const r = acAnalysis(n, { frequenciesHz: logFrequencies(20, 20000, 13) });
    r.frequenciesHz.forEach((f, i) => {
      const wrc = 2 * Math.PI * f * R * C;
      expect(r.magnitudeDb[i]!).toBeCloseTo(20 * Math.log10(wrc / Math.hypot(1, wrc)), 5);
      expect(r.phaseDeg[i]!).toBeCloseTo(90 - (Math.atan(wrc) * 180) / Math.PI, 5);
    });
  });
});

/** The textbook worked example: 12AX7, B+ 330 V, Rp 100 k, Rk 1.5 k; no grid current so the formulas apply exactly. */
function stage(bypassFarads: number | null): Netlist {
  const tube: NetTriode = { id: 'V1', kind: 'triode', nodes: { plate: 'p', grid: 'g', cathode: 'k' }, model: KOREN_12AX7 };
  return {
    schema: NETLIST_SCHEMA,
    ground: '0',
    input: { node: 'g', ohms: 1 },
    output: { node: 'p' },
    elements: [
      { id: 'B1', kind: 'dc-source', nodes: ['bp', '0'], volts: 330, ohms: 0 },
      { id: 'RP', kind: 'resistor', nodes: ['bp', 'p'], ohms: 100e3 },
      { id: 'RK', kind: 'resistor', nodes: ['k', '0'], ohms: 1.5e3 },
      { id: 'RG', kind: 'resistor', nodes: ['g', '0'], ohms: 1e6 },
      ...(bypassFarads ? [{ id: 'CK', kind: 'capacitor' as const, nodes: ['k', '0'] as const, farads: bypassFarads }] : []),
      tube,
    ],
  };
}

describe('triode gain formulas against the Koren model', () => {
  it('the operating point matches the worked example (Ip 1.07 mA, Vgk -1.61 V; textbook, confirmed)', () => {
    const op = new CircuitEngine(stage(null), 48000).operatingPoint();
    expect(op.tubes.V1!.plateAmps).toBeCloseTo(1.07e-3, 5);
    expect(op.tubes.V1!.vgk).toBeCloseTo(-1.61, 2);
  });
  it('mu and rp from the derivatives: gm 1.67 mA/V, rp 53.7 k at 250 V / -2 V (computed from the published model, model)', () => {
    const ss = tubeSmallSignal({ id: 'x', kind: 'triode', nodes: { plate: 'p', grid: 'g', cathode: 'k' }, model: KOREN_12AX7 }, -2, 250, 0);
    expect(ss.gmSiemens * 1e3).toBeCloseTo(1.67, 2);
    expect(ss.plateOhms / 1e3).toBeCloseTo(53.7, 1);
    // the analytic derivatives agree with central differences of the plate current
    const s = newSlopes(),
      h = 1e-5;
    const ip = (vg: number, vp: number) => {
      korenTriode(KOREN_12AX7, vg, vp, 1, s);
      return s.amps;
    };
    expect(ss.gmSiemens).toBeCloseTo((ip(-2 + h, 250) - ip(-2 - h, 250)) / (2 * h), 9);
    expect(ss.plateSiemens).toBeCloseTo((ip(-2, 250 + h) - ip(-2, 250 - h)) / (2 * h), 10);
  });
  for (const bypassed of [true, false]) {
    it(`${bypassed ? 'bypassed' : 'unbypassed'} cathode: AC gain at 1 kHz equals the formula`, () => {
      const n = stage(bypassed ? 10 : null);
      const op = new CircuitEngine(n, 48000).operatingPoint();
      const t = op.tubes.V1!;
      const ss = tubeSmallSignal(
        n.elements.find((e): e is NetTriode => e.kind === 'triode')!,
        t.vgk,
        t.vpk,
        0,
      );
      const Rac = 100e3,
        Rk = 1.5e3,
        mu = ss.mu,
        rp = ss.plateOhms;
      const formula = bypassed ? (mu * Rac) / (rp + Rac) : (mu * Rac) / (rp + Rac + (mu + 1) * Rk);
      const r = acAnalysis(n, { op, frequenciesHz: [1000] });
      const divider = 1e6 / (1e6 + 1); // 1 ohm source into the 1 M grid resistor
      expect(Math.hypot(r.re[0]!, r.im[0]!) / divider).toBeCloseTo(formula, bypassed ? 3 : 4);
      expect(Math.abs(r.phaseDeg[0]!)).toBeGreaterThan(179.9); // inverting
      // and the transient engine (independent WDF path) agrees at 1 mV within 1 %
      const e = new CircuitEngine(n, 96000);
      const dc = op.nodes.p!;
      let peak = 0;
      for (let k = 0; k < 9600; k++) {
        const y = e.processSample(1e-3 * Math.sin((2 * Math.PI * 1000 * k) / 96000));
        if (k > 4800) peak = Math.max(peak, Math.abs(y - dc));
      }
      expect(peak / 1e-3 / formula).toBeCloseTo(1, 1);
      expect(Math.abs(peak / 1e-3 / formula - 1)).toBeLessThan(0.01);
    });
  }
});

describe('tone network', () => {
  it('is found between the last plate coupling capacitor and the output of the triode template', () => {
    const c = designCircuit(TRIODE_INTO_TRIODE);
    const t = identifyToneNetwork(c)!;
    expect(t.drivenFrom).toBe('p2');
    expect([...t.partIds].sort()).toEqual(['C5', 'C6', 'R8', 'TONE', 'VOL', 'load'].sort());
    // alone (from a source of Rs at p2) it equals the ladder worked by hand with complex impedances (circuit theory)
    const parts = TRIODE_INTO_TRIODE.parts;
    const val = (id: string) => {
      const p = parts.find((q) => q.id === id)!;
      return p.kind === 'resistor' ? p.ohms : p.kind === 'capacitor' ? p.farads : NaN;
    };
    const tone = potResistors(parts.find((p) => p.id === 'TONE') as PotPart),
      vol = potResistors(parts.find((p) => p.id === 'VOL') as PotPart);
    type Z = [number, number];
    const add = (a: Z, b: Z): Z => [a[0] + b[0], a[1] + b[1]];
    const mul = (a: Z, b: Z): Z => [a[0] * b[0] - a[1] * b[1], a[0] * b[1] + a[1] * b[0]];
    const div = (a: Z, b: Z): Z => {
      const d = b[0] ** 2 + b[1] ** 2;
      return [(a[0] * b[0] + a[1] * b[1]) / d, (a[1] * b[0] - a[0] * b[1]) / d];
    };
    const par = (a: Z, b: Z): Z => div(mul(a, b), add(a, b));
    for (const sourceOhms of [0, 38e3]) {
      const r = toneNetworkAc(c, t, { sourceOhms });
      r.frequenciesHz.forEach((f, i) => {
        const w = 2 * Math.PI * f;
        const zc = (farads: number): Z => [0, -1 / (w * farads)];
        // VOL: end 1 at ground, so its first half (VOL.1) is wiper to ground, in parallel with the 1 M load
        const toGround = par([vol.upperOhms, 0], [TRIODE_INTO_TRIODE.output.loadOhms, 0]);
        const shunt = par(add([tone.upperOhms, 0], zc(val('C6'))), add([vol.lowerOhms, 0], toGround));
        const series = add(add(zc(val('C5')), [val('R8'), 0]), [sourceOhms, 0]);
        const h = mul(div(shunt, add(series, shunt)), div(toGround, add([vol.lowerOhms, 0], toGround)));
        expect(r.magnitudeDb[i]!).toBeCloseTo(20 * Math.log10(Math.hypot(h[0], h[1])), 4);
        expect(r.phaseDeg[i]!).toBeCloseTo((Math.atan2(h[1], h[0]) * 180) / Math.PI, 3);
      });
    }
  });
});
