// The transient solver's convergence safeguards and its honesty when it cannot converge:
// - junction limiting as SPICE2's pnjlim does it (Nagel, "SPICE2", UCB ERL-M520, 1975; the
//   formula from memory: a forward step of a junction beyond 2 V_t is replaced by
//   v_old + V_t ln(1 + (v_new - v_old)/V_t)), applied to the exponents of the netlist-v1 laws;
// - continuation from the last converged solution when Newton alone does not converge;
// - a sample with no solution never reaches the capacitor states: held and counted (checked on a
//   circuit that the independent reference cannot solve either: the netlist-v1 pentode law
//   jumps at Vsk = 0 when Vgk > 0, so a cathode-coupled screen can have no solution);
// - the counters reach `render` (a warning line) and the dual-slot meter report;
// - the generated kernels' plain-loop fallback (a Content Security Policy without
//   'unsafe-eval' forbids `new Function`) computes the same results.
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { CircuitEngine } from '../src/dsp/circuit/engine.ts';
import type { Netlist } from '../src/dsp/circuit/netlist.ts';
import { designToNetlist } from '../src/dsp/circuit/design.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { GridLawLimiter, PlateLawLimiter, limitExponent } from '../src/dsp/wdf/junction-limit.ts';
import { NewtonRoot, type RootDevice } from '../src/dsp/wdf/newton-root.ts';
import { compileCurrentUpdate, compileNewtonStep, loopCurrentUpdate, loopNewtonStep, setCodegenAllowed } from '../src/dsp/wdf/newton-kernel.ts';
import { compileLinearStage1, compileLinearStage2, loopLinearStage1, loopLinearStage2 } from '../src/dsp/circuit/linear-kernel.ts';
import { TriodeDevice } from '../src/dsp/tubes/devices.ts';
import { OversampledCircuit } from '../src/dsp/render/oversampled.ts';
import { DualSlotEngine, planModel, type SlotModel } from '../src/dsp/realtime/dual-slot-engine.ts';
import type { FromProcessor, MeterReport } from '../src/dsp/realtime/messages.ts';
import { main } from '../src/cli/main.ts';
import { encodeWav } from '../src/dsp/io/wav.ts';
import { MnaConvergenceError, simulateNetlist } from './reference/mna-reference.ts';
import { drive, errorDb } from './helpers/signals.ts';

describe('junction limiting (pnjlim, SPICE2)', () => {
  const pnjlim = (vOld: number, vNew: number, vt: number) => vOld + vt * Math.log(1 + (vNew - vOld) / vt);
  const lim = (aOld: number, aNew: number) => {
    const a = Float64Array.of(aOld, aNew);
    limitExponent(a);
    return a[1]!;
  };

  it('a rise of the exponent by more than 2 from the knee region is compressed as pnjlim compresses a junction step', () => {
    expect(lim(1, 30)).toBeCloseTo(pnjlim(1, 30, 1), 12); // V_t = 1 in exponent units
    expect(lim(0, 12)).toBeCloseTo(pnjlim(0, 12, 1), 12);
  });
  it('from deep in the tail it starts from the knee (pnjlim: v_new = V_t ln(v_new / V_t) from reverse bias, here ln(1 + a))', () => {
    expect(lim(-40, 10)).toBeCloseTo(Math.log(11), 12);
  });
  it('small rises, falls, steps within the tail and steps in the power-law region are not limited', () => {
    expect(lim(0.5, 2.4)).toBe(2.4);
    expect(lim(5, -30)).toBe(-30);
    expect(lim(-40, -1)).toBe(-1);
    expect(lim(3, 50)).toBe(50);
  });
  it('the grid-law limiter shortens the whole Newton step to the limited grid exponent (Dempwolf-Zolzer 12AX7 cg, xi, DAFx-11)', () => {
    const cg = 9.901,
      xi = 1.314,
      k = cg * xi;
    const lim1 = new GridLawLimiter(0, k);
    const v = Float64Array.of(-0.5, 200),
      delta = Float64Array.of(3, -40),
      s = Float64Array.of(1);
    lim1.limit(v, delta, s);
    const aOld = k * -0.5,
      aNew = k * 2.5;
    expect(s[0]).toBeCloseTo((Math.log(1 + aNew) - aOld) / (aNew - aOld), 12);
    // a falling grid is left alone
    s[0] = 1;
    lim1.limit(v, Float64Array.of(-3, 10), s);
    expect(s[0]).toBe(1);
  });
  it('the plate-law limiter stops the grid where the Koren exponent ex·z reaches its limited value (Koren 1996 12AX7 set)', () => {
    const p = { mu: 100, ex: 1.4, kp: 600, kvb: 300 };
    const lim2 = new PlateLawLimiter(0, 1, false, p.kp, p.mu, p.kvb, p.ex);
    const v = Float64Array.of(-5, 250),
      delta = Float64Array.of(5, 0),
      s = Float64Array.of(1);
    lim2.limit(v, delta, s);
    const sq = Math.sqrt(p.kvb + 250 * 250);
    const a = (vg: number) => p.ex * p.kp * (1 / p.mu + vg / sq);
    const aLim = Math.log(1 + a(0)); // from the tail (a(-5) < 0) to a(0) > 2: compressed from the knee
    expect(a(-5)).toBeLessThan(0);
    expect(a(-5 + 5 * s[0]!)).toBeCloseTo(aLim, 9);
  });
});

/** A port whose law jumps: i = 1 A above 0 V, nothing at or below (no root against a 1 ohm source at 0.5 V). */
class JumpDevice implements RootDevice {
  readonly portCount = 1;
  readonly maxStepVolts = [10];
  readonly jacobianPattern: readonly (readonly [number, number])[] = [[0, 0]];
  evaluate(v: Float64Array, o: number, i: Float64Array, d: Float64Array, dOff: number): void {
    i[o] = v[o]! > 0 ? 1 : 0;
    d[dOff] = 0;
  }
}

describe('NewtonRoot: continuation, and no unconverged iterate', () => {
  const F = Float64Array.of(-1);
  it('where v = p - i(v) has no solution, solve returns -1 and v, i stay at the last converged solution', () => {
    const root = new NewtonRoot([new JumpDevice()], F);
    expect(root.solve(Float64Array.of(-0.2), { toleranceVolts: 1e-9, maxIterations: 20 })).toBeGreaterThan(0);
    expect(root.v[0]).toBeCloseTo(-0.2, 12); // i = 0 there
    const n = root.solve(Float64Array.of(0.5), { toleranceVolts: 1e-9, maxIterations: 20, homotopyDepth: 6 });
    expect(n).toBe(-1);
    expect(root.v[0]).toBeCloseTo(-0.2, 12);
    expect(root.i[0]).toBe(0);
    expect(root.failures).toBe(1);
    expect(root.fallbacks).toBe(1);
  });

  it('a solve that Newton cannot finish in its iteration cap is finished by continuation, to the same solution as an uncapped solve', () => {
    const AX7 = { mu: 100, ex: 1.4, kg1: 1060, kp: 600, kvb: 300 };
    const GRID = { gg: 6.177e-4, cg: 9.901, xi: 1.314, ig0: 8.025e-8 };
    const F2 = Float64Array.of(-1e6, 0, 0, -100e3); // 1 M grid leak, 100 k plate load (invented values)
    const capped = new NewtonRoot([new TriodeDevice(AX7, GRID)], F2);
    const free = new NewtonRoot([new TriodeDevice(AX7, GRID)], F2);
    const start = Float64Array.of(-4, 300),
      pStart = Float64Array.of(-4, 300);
    for (const r of [capped, free]) {
      r.setState(start);
      r.solve(pStart, { toleranceVolts: 1e-12, maxIterations: 200 });
    }
    const pEnd = Float64Array.of(30, 300); // the grid driven hard into conduction in one step
    const nCapped = capped.solve(pEnd, { toleranceVolts: 1e-9, maxIterations: 5, homotopyDepth: 10 });
    const nFree = free.solve(pEnd, { toleranceVolts: 1e-12, maxIterations: 200 });
    expect(nFree).toBeGreaterThan(5); // plain Newton needs more than the cap...
    expect(nCapped).toBeGreaterThan(0); // ...continuation gets there within it
    expect(capped.fallbacks).toBe(1);
    expect(capped.failures).toBe(0);
    for (let k = 0; k < 2; k++) expect(Math.abs(capped.v[k]! - free.v[k]!)).toBeLessThan(1e-6);
  });
});

// A cathode-coupled EF86 with no grid current, its grid driven to +3 V: with plate current the
// cathode rises above the screen (Vsk < 0, so no plate current); without it the screen is above
// the cathode and the plate law gives E1 -> Vgk, not 0. No solution exists (invented values).
const EF86 = { name: 'koren-pentode', mu: 34.9, ex: 1.35, kg1: 2648.1, kg2: 4627, kp: 222.06, kvb: 4.7 } as const;
const NO_SOLUTION: Netlist = {
  schema: 'valvewright.netlist.v1',
  ground: '0',
  input: { node: 'g', ohms: 0 },
  output: { node: 'p' },
  elements: [
    { id: 'B1', kind: 'dc-source', nodes: ['bp', '0'], volts: 250, ohms: 0 },
    { id: 'RP', kind: 'resistor', nodes: ['bp', 'p'], ohms: 100e3 },
    { id: 'RS', kind: 'resistor', nodes: ['bp', 's'], ohms: 1e6 },
    { id: 'RK', kind: 'resistor', nodes: ['k', '0'], ohms: 1000 },
    { id: 'CP', kind: 'capacitor', nodes: ['p', '0'], farads: 1e-9 },
    { id: 'V1', kind: 'pentode', nodes: { plate: 'p', screen: 's', grid: 'g', cathode: 'k' }, model: EF86 },
  ],
};
const stepInput = (n: number) => Float64Array.from({ length: n }, (_, k) => (k < 20 ? 0 : 3));

describe('a sample without a solution is held, never accepted', () => {
  it('the reference cannot solve it either', () => {
    expect(() => simulateNetlist(NO_SOLUTION, stepInput(40), 48000)).toThrow(MnaConvergenceError);
  });

  it('the engine holds the last converged sample (output, capacitor state) and counts every such sample', () => {
    const e = new CircuitEngine(NO_SOLUTION, 48000, { antialiasing: 'off' });
    const x = stepInput(200),
      y = x.map((v) => e.processSample(v));
    const st = e.solverStats;
    expect(st.failures).toBe(180);
    expect(st.fallbacks).toBe(180);
    expect(e.failedSamples).toBe(180);
    for (let k = 20; k < 200; k++) expect(y[k]).toBe(y[19]); // held: nothing unconverged reached the plate capacitor
    // back to a solvable input: it continues from the held state, the operating point
    expect(e.processSample(0)).toBeCloseTo(y[0]!, 9);
  });

  it("OversampledCircuit exposes its engine's counters", () => {
    const oc = new OversampledCircuit(NO_SOLUTION, 48000, 1, undefined, { antialiasing: 'off' });
    for (const v of stepInput(50)) oc.processSample(v);
    expect(oc.solverStats.failures).toBe(30);
    expect(oc.solverStats).toEqual(oc.engine.solverStats);
  });

  it('render --raw prints one warning line with the counts (stderr), and the --json summary carries them', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'vw-solver-'));
    const np = join(dir, 'n.json'),
      inPath = join(dir, 'in.wav');
    writeFileSync(np, JSON.stringify(NO_SOLUTION));
    writeFileSync(inPath, encodeWav([Float32Array.from(stepInput(200))], 48000, { bitDepth: 32, float: true }));
    const out: string[] = [],
      err: string[] = [];
    const code = await main(['render', '--netlist', np, '--input', inPath, '--output', join(dir, 'o.wav'), '--raw', '--json'], {
      out: (l) => out.push(l),
      err: (l) => err.push(l),
    });
    expect(code).toBe(0);
    const warnings = err.filter((l) => l.startsWith('warning:'));
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toMatch(/fallback \(continuation\) on 180 of 200 circuit samples, and 180 did not converge/);
    const summary = JSON.parse(out[0]!) as { newtonFailures: number; newtonFallbacks: number };
    expect(summary.newtonFailures).toBe(180);
    expect(summary.newtonFallbacks).toBe(180);
    // a clean render warns about nothing
    const err2: string[] = [];
    await main(['render', '--design', 'triode-triode', '--input', inPath, '--output', join(dir, 'o2.wav'), '--oversample', '1'], {
      out: () => {},
      err: (l) => err2.push(l),
    });
    expect(err2.filter((l) => l.startsWith('warning:'))).toHaveLength(0);
  });

  it("the dual-slot meter report carries both slots' counters", () => {
    const reports: MeterReport[] = [];
    // stand-in counters on top of the real slot models (the plumbing is what is checked here)
    let slot = 0;
    const e = new DualSlotEngine({
      sampleRateHz: 48000,
      factor: 1,
      meterHz: 100,
      createModel: (plan) => {
        const first = slot++ === 0;
        return Object.create(planModel(plan), { fallbackSamples: { value: first ? 3 : 5 }, failedSamples: { value: first ? 1 : 2 } }) as SlotModel;
      },
      post: (m: FromProcessor) => {
        if (m.type === 'meter') reports.push({ ...m });
      },
      initial: [
        { type: 'load-design', slot: 'A', design: TEMPLATES['triode-triode']! },
        { type: 'load-design', slot: 'B', design: TEMPLATES['triode-triode']! },
      ],
    });
    const x = new Float32Array(128),
      y = new Float32Array(128);
    for (let b = 0; b < 20; b++) e.process(x, y, 128);
    const last = reports[reports.length - 1]!;
    expect(last.solverFallbackSamples).toBe(8);
    expect(last.solverFailedSamples).toBe(3);
  });
});

describe('the generated kernels and their plain-loop fallback (no code generation under a strict CSP)', () => {
  afterEach(() => setCodegenAllowed(null));

  it("Newton step and current update: the loops give the generated kernels' results on random systems", () => {
    let seed = 7;
    const rnd = () => {
      seed = (seed * 16807) % 2147483647;
      return seed / 2147483647 - 0.5;
    };
    const nzRow = Int32Array.of(0, 1, 1, 1, 2, 2, 3, 4, 4),
      nzCol = Int32Array.of(0, 0, 1, 2, 0, 2, 3, 3, 4),
      m = 5;
    const gen = compileNewtonStep(m, nzRow, nzCol),
      loop = loopNewtonStep(m, nzRow, nzCol);
    const ug = compileCurrentUpdate(m, nzRow, nzCol),
      ul = loopCurrentUpdate(nzRow, nzCol);
    for (let t = 0; t < 200; t++) {
      const F = Float64Array.from({ length: m * m }, () => 1e5 * rnd()),
        p = Float64Array.from({ length: m }, () => 100 * rnd());
      const v = Float64Array.from({ length: m }, () => 100 * rnd()),
        i = Float64Array.from({ length: m }, () => 1e-3 * rnd());
      const d = Float64Array.from({ length: nzRow.length }, () => 1e-3 * rnd());
      const r1 = new Float64Array(m + 1),
        r2 = new Float64Array(m + 1);
      const ok1 = gen(F, p, v, i, d, r1),
        ok2 = loop(F, p, v, i, d, r2);
      expect(ok2).toBe(ok1);
      if (ok1) for (let k = 0; k <= m; k++) expect(r2[k]).toBe(r1[k]);
      const i1 = Float64Array.from(i),
        i2 = Float64Array.from(i);
      ug(i1, d, r1);
      ul(i2, d, r1);
      for (let k = 0; k < m; k++) expect(i2[k]).toBeCloseTo(i1[k]!, 18);
    }
  });

  it("linear stages: the loops give the generated kernels' results", () => {
    const shape = { nc: 4, m: 3, bdf2: [false, true, false, true] };
    const g1 = compileLinearStage1(shape),
      l1 = loopLinearStage1(shape),
      g2 = compileLinearStage2(shape),
      l2 = loopLinearStage2(shape);
    const nd = 5,
      nx = 8;
    const r = (n: number, s: number) => Float64Array.from({ length: n }, (_, k) => Math.sin(s * (k + 1)) * 10);
    const Pd = r(3 * nd, 1.3),
      pConst = r(3, 2.1),
      Cd = r(4 * nx, 0.7),
      cConst = r(4, 0.3),
      Od = r(nx, 1.9),
      oConst = r(1, 2.9),
      capR = r(4, 3.3),
      invCapR = capR.map((x) => 1 / x);
    const state = () => ({ capV: r(4, 0.9), capVPrev: r(4, 1.1), capI: r(4, 0.01) });
    const a = state(),
      b = state();
    const xa = new Float64Array(nx),
      xb = new Float64Array(nx),
      pa = new Float64Array(3),
      pb = new Float64Array(3),
      src = Float64Array.of(0.37),
      da = new Float64Array(1),
      db = new Float64Array(1);
    g1(src, 0, a.capV, a.capVPrev, a.capI, capR, Pd, pConst, xa, pa);
    l1(src, 0, b.capV, b.capVPrev, b.capI, capR, Pd, pConst, xb, pb);
    for (let k = 0; k < 3; k++) expect(pb[k]).toBeCloseTo(pa[k]!, 9);
    const i = r(3, 4.4);
    g2(i, xa, Cd, cConst, invCapR, a.capV, a.capVPrev, a.capI, Od, oConst, da, 0);
    l2(i, xb, Cd, cConst, invCapR, b.capV, b.capVPrev, b.capI, Od, oConst, db, 0);
    for (let k = 0; k < 4; k++) {
      expect(b.capV[k]).toBeCloseTo(a.capV[k]!, 9);
      expect(b.capI[k]).toBeCloseTo(a.capI[k]!, 9);
      expect(b.capVPrev[k]).toBeCloseTo(a.capVPrev[k]!, 9);
    }
    expect(db[0]).toBeCloseTo(da[0]!, 9);
  });

  it('an engine built where `new Function` throws EvalError (as under a CSP without unsafe-eval) runs on the loops and renders the same', () => {
    const netlist = designToNetlist(TEMPLATES['pentode-triode']!);
    const x = drive(48000, 0.05, 1.5);
    const run = () => {
      const e = new CircuitEngine(netlist, 48000);
      return x.map((v) => e.processSample(v));
    };
    const withCodegen = run();
    const original = globalThis.Function;
    let refused = 0;
    // a stand-in for the browser's CSP check: constructing a function from text throws EvalError
    globalThis.Function = new Proxy(original, {
      construct() {
        refused++;
        throw new EvalError("Refused to evaluate a string as JavaScript because 'unsafe-eval' is not an allowed source");
      },
    });
    let withoutCodegen: Float64Array;
    try {
      setCodegenAllowed(null);
      withoutCodegen = run();
    } finally {
      globalThis.Function = original;
    }
    expect(refused).toBeGreaterThan(0);
    expect(errorDb(withoutCodegen, withCodegen)).toBeLessThan(-200);
  });
});
