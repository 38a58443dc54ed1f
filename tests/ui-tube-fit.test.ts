// The workspace's tube-file import (src/ui/model/tube-fit-plot.ts): a file written by the CLI's
// `tube fit --out` from points of a hidden Koren set (Koren, Glass Audio 8(5), 1996) reads back,
// its plotted curves pass through the hidden tube's currents, and a design carrying the file
// compiles where the type was never registered before.
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../src/cli/main.ts';
import { designWithTube, fitPlot, readTubeFile, tubesOfKind } from '../src/ui/model/tube-fit-plot.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { validateDesign } from '../src/dsp/circuit/design.ts';
import { designCircuit } from '../src/dsp/circuit/design.ts';
import { CircuitEngine } from '../src/dsp/circuit/engine.ts';

// The hidden triode, written out from Koren's triode equation (netlist-v1 form, factor 2).
const hidden = { mu: 63, ex: 1.33, kg1: 700, kp: 250, kvb: 900 };
const koren = (vg: number, vp: number) => {
  const e1 = (vp / hidden.kp) * Math.log1p(Math.exp(hidden.kp * (1 / hidden.mu + vg / Math.sqrt(hidden.kvb + vp * vp))));
  return e1 > 0 ? (2 * Math.pow(e1, hidden.ex)) / hidden.kg1 : 0;
};

async function fittedFile(type: string): Promise<{ path: string; text: string }> {
  const dir = mkdtempSync(join(tmpdir(), 'vw-tubefile-'));
  const rows = ['Vpk,Vgk,Ip(mA)'];
  for (const vp of [60, 120, 200, 300])
    for (const vg of [0, -1, -2, -3]) {
      const a = koren(vg, vp);
      if (a > 5e-6) rows.push(`${vp},${vg},${a * 1e3}`);
    }
  writeFileSync(join(dir, 'pts.csv'), rows.join('\n'));
  const path = join(dir, `${type}.json`),
    out: string[] = [],
    err: string[] = [];
  const code = await main(['tube', 'fit', '--triode', join(dir, 'pts.csv'), '--out', path, '--type', type], {
    out: (l) => out.push(l),
    err: (l) => err.push(l),
  });
  expect(code, err.join('\n')).toBe(0);
  return { path, text: readFileSync(path, 'utf8') };
}

describe('tube file import and plot', () => {
  it("the plotted fitted curves pass through the hidden tube's currents within 2 %, one curve per grid voltage", async () => {
    const f = await fittedFile('HID63');
    const t = readTubeFile(f.text, 'HID63.json');
    expect(t.type.name).toBe('HID63');
    const plot = fitPlot(t);
    expect(plot.series.map((s) => s.vgk)).toEqual([0, -1, -2, -3]);
    expect(plot.rmsRelativeError).toBeLessThan(0.02);
    for (const s of plot.series) {
      // read the curve as drawn (linear between samples) at a few plate voltages
      for (const vp of [100, 180, 260]) {
        const i = s.curve.findIndex(([v]) => v >= vp);
        const [v0, a0] = s.curve[i - 1]!,
          [v1, a1] = s.curve[i]!;
        const drawn = a0 + ((a1 - a0) * (vp - v0)) / (v1 - v0),
          truth = koren(s.vgk, vp);
        if (truth > 50e-6) expect(Math.abs(drawn / truth - 1), `Vgk ${s.vgk}, Vpk ${vp}`).toBeLessThan(0.02);
      }
      for (const q of s.points) expect(Math.abs(q.fittedIp / q.ip - 1)).toBeLessThan(0.02);
    }
    expect(plot.maxAmps).toBeGreaterThanOrEqual(Math.max(...t.points.map((q) => q.ip)));
  });
  it('bad files give one clear line', () => {
    expect(() => readTubeFile('{', 'x.json')).toThrow(/x.json: not JSON/);
    expect(() => readTubeFile('{"schema":"other"}', 'x.json')).toThrow(/schema/);
    expect(() =>
      readTubeFile(JSON.stringify({ schema: 'valvewright.tube.v1', type: 'Q', kind: 'triode', like: 'EF86', model: {}, gridCurrent: {} }), 'x.json'),
    ).toThrow(/"like" must name a library triode/);
  });
  it('a design that uses the type carries the file; validating it elsewhere registers the type, and it compiles and solves', async () => {
    const f = await fittedFile('HID63B');
    const t = readTubeFile(f.text, 'HID63B.json');
    const base = TEMPLATES['pentode-triode']!;
    expect(tubesOfKind(base, 'triode')).toEqual(['V2']);
    expect(() => designWithTube(base, 'V1', t)).toThrow(/V1 is a pentode/);
    const d = designWithTube(base, 'V2', t);
    expect(d.parts.find((p) => p.id === 'V2')).toMatchObject({ type: 'HID63B' });
    expect(d.userTubes).toHaveLength(1);
    // a second import of the same name replaces the first
    expect(designWithTube(d, 'V2', t).userTubes).toHaveLength(1);
    // the same design as another thread or a saved file sees it: JSON, renamed type never registered
    const renamed = JSON.parse(JSON.stringify(d).replaceAll('HID63B', 'HID63C')) as unknown;
    const v = validateDesign(renamed);
    const op = new CircuitEngine(designCircuit(v), 48000).operatingPoint();
    expect(op.tubes.V2!.plateAmps).toBeGreaterThan(0);
    expect(() => validateDesign({ ...(renamed as object), userTubes: [{ schema: 'nope' }] })).toThrow(/userTubes\[0\]/);
  });
});
