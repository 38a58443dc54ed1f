// tube fit: the fitter recovers currents of random hidden parameter sets (Koren 1996 forms), reads
// CSV points with units, and the CLI writes a user tube file a design can name.
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { fitGridLaw, fitPentode, fitTriode, initialVelocityAmps, type FitPoint } from '../src/dsp/tubes/fit.ts';
import { korenPentodePlate, korenPentodeScreen, korenTriode, newSlopes } from '../src/dsp/tubes/models.ts';
import { parsePointsCsv } from '../src/dsp/tubes/user-tube.ts';
import { main } from '../src/cli/main.ts';

// deterministic test stream (LCG, Numerical Recipes constants)
let seed = 12345;
const rnd = () => {
  seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0;
  return seed / 4294967296;
};
const s = newSlopes();

function triodePoints(p: { mu: number; ex: number; kg1: number; kp: number; kvb: number }): FitPoint[] {
  const pts: FitPoint[] = [];
  for (const vp of [40, 80, 150, 250, 350])
    for (const vg of [0, -0.5, -1, -2, -3, -4]) {
      korenTriode(p, vg, vp, 1, s);
      if (s.amps > 2e-6) pts.push({ vgk: vg, vpk: vp, ip: s.amps });
    }
  return pts;
}

describe('fitter against hidden Koren parameter sets (the model forms of Koren, Glass Audio 8(5), 1996)', () => {
  it('30 random triodes: every point within 2 % (mu 5-150, ex 1.1-1.7, kg1 100-5000, kp 20-1500, kvb 1-5000)', () => {
    let worst = 0;
    for (let k = 0; k < 30; k++) {
      const p = { mu: 5 * 30 ** rnd(), ex: 1.1 + 0.6 * rnd(), kg1: 100 * 50 ** rnd(), kp: 20 * 75 ** rnd(), kvb: 5000 ** rnd() };
      const pts = triodePoints(p);
      const f = fitTriode(pts);
      pts.forEach((q, i) => {
        worst = Math.max(worst, Math.abs(f.fittedIp[i]! / q.ip! - 1));
      });
    }
    expect(worst).toBeLessThan(0.02);
  });
  it('15 random pentodes with screen points, and 5 without: every plate point within 2 %', () => {
    let worst = 0;
    for (let k = 0; k < 20; k++) {
      const p = { mu: 5 + 60 * rnd(), ex: 1.15 + 0.5 * rnd(), kg1: 200 * 30 ** rnd(), kg2: 500 * 30 ** rnd(), kp: 10 * 100 ** rnd(), kvb: 2 + 60 * rnd() };
      const pts: FitPoint[] = [];
      for (const vs of [100, 150])
        for (const vp of [10, 30, 60, 120, 250])
          for (const vg of [0, -1, -2, -3]) {
            korenPentodePlate(p, vg, vp, vs, 1, s);
            const ip = s.amps;
            korenPentodeScreen(p, vg, vs, 1, s);
            if (ip > 2e-6) pts.push({ vgk: vg, vpk: vp, vsk: vs, ip, ...(k < 15 && s.amps > 0 ? { is: s.amps } : {}) });
          }
      const f = fitPentode(pts);
      pts.forEach((q, i) => {
        worst = Math.max(worst, Math.abs(f.fittedIp[i]! / q.ip! - 1));
      });
      if (k < 15)
        pts.forEach((q, i) => {
          if (q.is) worst = Math.max(worst, Math.abs(f.fittedIs[i]! / q.is - 1));
        });
    }
    expect(worst).toBeLessThan(0.02);
  });
  it('recovers a grid law from its own currents (initial-velocity law, docs/netlist-v1.md)', () => {
    const g = { gg: 5e-4, xi: 1.4, cathodeKelvin: 1000, onsetVolts: -0.3 };
    const pts = [-1.5, -1.2, -0.9, -0.6, -0.3, 0, 0.5, 1, 2].map((v) => ({ vgk: v, vpk: 100, ig: initialVelocityAmps(g, v) }));
    const f = fitGridLaw(pts);
    for (const q of pts) expect(initialVelocityAmps(f, q.vgk) / q.ig).toBeCloseTo(1, 3);
  });
  it('refuses too few points and non-positive currents with a clear message', () => {
    expect(() => fitTriode([{ vgk: 0, vpk: 100, ip: 1e-3 }])).toThrow(/at least 5 points/);
    expect(() => fitTriode([...Array(5)].map(() => ({ vgk: -5, vpk: 100, ip: 0 })))).toThrow(/must be positive/);
  });
});

describe('points CSV', () => {
  it('reads unit suffixes in the three header styles (SI prefixes: milli 1e-3, micro 1e-6)', () => {
    const p = parsePointsCsv('Vpk,Vgk(V),Ip(mA)\n100,-1,0.5\n');
    expect(p[0]!.ip).toBeCloseTo(0.5e-3, 15);
    expect(parsePointsCsv('Vpk;Vgk;Ip mA\n100;-1;0.5')[0]!.ip).toBeCloseTo(0.5e-3, 15);
    const q = parsePointsCsv('Vpk\tVgk\tIp [uA]\tIg [nA]\n100\t-1\t500\t3')[0]!;
    expect([q.vgk, q.vpk]).toEqual([-1, 100]);
    expect(q.ip! / 500e-6).toBeCloseTo(1, 12);
    expect(q.ig! / 3e-9).toBeCloseTo(1, 12);
  });
  it('says what is wrong: unknown column, wrong unit, short row', () => {
    expect(() => parsePointsCsv('Va,Vg,Ia\n1,2,3')).toThrow(/unknown column "Va"/);
    expect(() => parsePointsCsv('Vpk,Vgk,Ip(mV)\n1,2,3')).toThrow(/a current needs/);
    expect(() => parsePointsCsv('Vpk,Vgk,Ip\n1,2')).toThrow(/line 2/);
  });
});

describe('valvewright tube fit and tubes (CLI)', () => {
  const dir = mkdtempSync(join(tmpdir(), 'vw-fit-'));
  const run = async (...argv: string[]) => {
    const out: string[] = [],
      err: string[] = [];
    const code = await main(argv, { out: (l) => out.push(l), err: (l) => err.push(l) });
    return { code, out: out.join('\n'), err: err.join('\n') };
  };
  it('--json gives model and gridCurrent as netlist-v1 carries them; --out writes a tube a design can name', async () => {
    const p = { mu: 70, ex: 1.35, kg1: 900, kp: 400, kvb: 200 };
    const csv = ['Vpk,Vgk,Ip(mA)', ...triodePoints(p).map((q) => `${q.vpk},${q.vgk},${q.ip! * 1e3}`)].join('\n');
    writeFileSync(join(dir, 'pts.csv'), csv);
    const out = join(dir, 'mine.json');
    const r = await run('tube', 'fit', '--triode', join(dir, 'pts.csv'), '--json', '--out', out, '--type', 'MY70');
    expect(r.code, r.err).toBe(0);
    const j = JSON.parse(r.out) as { model: { name: string }; gridCurrent: { name: string }; points: { relativeError: number }[]; rmsRelativeError: number };
    expect(j.model.name).toBe('koren-triode');
    expect(j.gridCurrent.name).toBe('initial-velocity');
    expect(j.rmsRelativeError).toBeLessThan(0.005);
    expect(Object.keys(j.points[0]!)).toEqual(['vpk', 'vgk', 'ip', 'fittedIp', 'relativeError']);
    const design = {
      schema: 'valvewright.design.v1',
      name: 'uses MY70',
      input: { node: 'in', ohms: 1000 },
      output: { node: 'p', loadOhms: 1e6 },
      supply: { node: 'b', volts: 250, ohms: 1000, filterFarads: 1e-5 },
      parts: [
        { id: 'C1', kind: 'capacitor', nodes: ['in', 'g'], farads: 2.2e-8 },
        { id: 'Rg', kind: 'resistor', nodes: ['g', '0'], ohms: 1e6 },
        { id: 'Rp', kind: 'resistor', nodes: ['b', 'p'], ohms: 1e5 },
        { id: 'Rk', kind: 'resistor', nodes: ['k', '0'], ohms: 1500 },
        { id: 'V1', kind: 'tube', type: 'MY70', sample: 1, nodes: { plate: 'p', grid: 'g', cathode: 'k' } },
      ],
    };
    writeFileSync(join(dir, 'd.json'), JSON.stringify(design));
    const op = await run('--tubes', out, 'op', '--design', join(dir, 'd.json'), '--json');
    expect(op.code, op.err).toBe(0);
    expect(JSON.parse(op.out).tubes.V1.plateAmps).toBeGreaterThan(0);
    expect(JSON.parse(readFileSync(out, 'utf8')).type).toBe('MY70');
  });
  it('bad input: clear message, no stack trace', async () => {
    writeFileSync(join(dir, 'bad.csv'), 'Vpk,Vgk,Ip\n100,-1,abc\n');
    const r = await run('tube', 'fit', '--triode', join(dir, 'bad.csv'));
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/line 2: "abc" is not a number/);
    expect(r.err).not.toMatch(/at .*\.ts:/);
    expect((await run('tube', 'fit', join(dir, 'bad.csv'))).err).toMatch(/--triode or --pentode/);
  });
  it('tubes --json lists a triode-pentode envelope sharing one heater', async () => {
    const r = await run('tubes', '--json');
    const j = JSON.parse(r.out) as { tubes: { type: string; sections: { kind: string }[]; heater: { volts: number; amps: number } }[] };
    const combo = j.tubes.filter(
      (t) =>
        t.sections
          .map((x) => x.kind)
          .sort()
          .join() === 'pentode,triode',
    );
    expect(combo.map((t) => t.type)).toEqual(expect.arrayContaining(['ECF80', 'ECL82', '6AN8']));
    for (const t of j.tubes) expect(Object.keys(t)).toEqual(['type', 'sections', 'heater', 'ratings', 'sources']);
  });
});
