// The workspace imports a user tube file (written here by the CLI's `tube fit --out` from points of
// a hidden Koren triode: Koren, Glass Audio 8(5), 1996), plots its fitted curves against its
// points, and a design then uses the type in the audio thread too. Fresh context per case; waits
// poll the page's state; nothing is asserted about the wall clock.
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.ts';
import { SCREENSHOT_DIR, openWorkspace, startUiHarness, type UiHarness, type Workspace } from './ui-harness.ts';

type Win = {
  __valvewright: {
    port: { settled(): boolean; design(s: 'A' | 'B'): unknown; renderOffline(s: string, sec: number): Promise<Float32Array | null> };
    slots(): { A: { parts: { id: string; type?: string }[] } };
  };
};

let harness: UiHarness;
let w: Workspace | null = null;
let tubeFile = '';
let pointCount = 0;

beforeAll(async () => {
  const hidden = { mu: 63, ex: 1.33, kg1: 700, kp: 250, kvb: 900 };
  const koren = (vg: number, vp: number) =>
    (2 * Math.pow((vp / hidden.kp) * Math.log1p(Math.exp(hidden.kp * (1 / hidden.mu + vg / Math.sqrt(hidden.kvb + vp * vp)))), hidden.ex)) / hidden.kg1;
  const dir = mkdtempSync(join(tmpdir(), 'vw-tubefile-ui-'));
  const rows = ['Vpk,Vgk,Ip'];
  for (const vp of [60, 120, 200, 300]) for (const vg of [0, -1, -2]) rows.push(`${vp},${vg},${koren(vg, vp)}`);
  pointCount = rows.length - 1;
  writeFileSync(join(dir, 'pts.csv'), rows.join('\n'));
  const out = join(dir, 'HID.json');
  const code = await main(['tube', 'fit', '--triode', join(dir, 'pts.csv'), '--out', out, '--type', 'HID63-UI'], { out: () => {}, err: () => {} });
  if (code !== 0) throw new Error('tube fit failed');
  tubeFile = readFileSync(out, 'utf8');
  harness = await startUiHarness();
}, 120_000);
afterAll(async () => {
  await w?.close();
  await harness?.close();
});

async function fresh(): Promise<Workspace> {
  await w?.close();
  w = await harness.newWorkspace();
  await openWorkspace(w);
  return w;
}

async function render(p: Workspace): Promise<number[]> {
  const out = await p.page.evaluate(async () => {
    const r = await (window as unknown as Win).__valvewright.port.renderOffline('A', 0.6);
    return r ? Array.from(r.subarray(4800, 28800)) : [];
  });
  expect(out.length, `render: ${out.length} samples`).toBeGreaterThan(1000);
  expect(out.every(Number.isFinite)).toBe(true);
  return out;
}

describe('tube file import', () => {
  it("plots the fitted curves against the file's points, and the design plays with the imported type", async () => {
    const p = await fresh();
    await p.page.getByTestId('demo-select').selectOption('boiler-fifths');
    await p.page.getByText(/Boiler Fifths · 5\.0 s/).waitFor();
    await expect
      .poll(
        () =>
          p.page.evaluate(() => {
            const v = (window as unknown as Win).__valvewright;
            return v.port.settled() && JSON.stringify(v.port.design('A')) === JSON.stringify(v.slots().A);
          }),
        { timeout: 60_000 },
      )
      .toBe(true);
    const before = await render(p);
    await p.page.getByLabel('import tube file').setInputFiles({ name: 'HID.json', mimeType: 'application/json', buffer: Buffer.from(tubeFile) });
    await expect.poll(() => p.page.getByTestId('tube-fit-point').count(), { timeout: 30_000 }).toBe(pointCount);
    expect(await p.page.locator('[data-testid="tube-fit-plot"] polyline').count()).toBe(3); // Vgk 0, -1, -2
    await expect.poll(() => p.page.getByTestId('tube-fit-summary').textContent()).toMatch(/HID63-UI \(triode.*12 points/);
    await p.page.getByTestId('tube-fit-panel').screenshot({ path: join(SCREENSHOT_DIR, 'tube-fit-panel.png') });
    await p.page.getByRole('button', { name: 'Use in this design' }).click();
    await expect
      .poll(
        () =>
          p.page.evaluate(() => {
            const v = (window as unknown as Win).__valvewright;
            const s = v.slots().A;
            return s.parts.find((x) => x.id === 'V2')?.type === 'HID63-UI' && v.port.settled() && JSON.stringify(v.port.design('A')) === JSON.stringify(s);
          }),
        { timeout: 60_000 },
      )
      .toBe(true);
    // the audio thread compiled the design with the imported type: an offline render comes back finite
    // (and it sounds different from the 12AX7 it replaced)
    const out = await render(p);
    expect(Math.max(...out.map(Math.abs))).toBeGreaterThan(1e-3);
    const diff = Math.sqrt(out.reduce((acc, x, i) => acc + (x - before[i]!) ** 2, 0) / out.length);
    expect(diff).toBeGreaterThan(1e-4);
    await expect.poll(() => p.page.getByText('V2 · HID63-UI').count(), { timeout: 30_000 }).toBeGreaterThan(0);
    // the part editor shows the imported type as V2's type
    await p.page.locator('[data-part="V2"]').click();
    await expect.poll(() => p.page.getByLabel('Type').inputValue(), { timeout: 30_000 }).toBe('HID63-UI');
    expect(p.consoleErrors).toEqual([]);
  }, 240_000);
  it('a file that is not a tube file is refused with one clear line', async () => {
    const p = await fresh();
    await p.page
      .getByLabel('import tube file')
      .setInputFiles({ name: 'bad.json', mimeType: 'application/json', buffer: Buffer.from('{"schema":"valvewright.design.v1"}') });
    await expect.poll(() => p.page.getByTestId('tube-fit-error').textContent()).toMatch(/bad.json: "schema" must be "valvewright.tube.v1"/);
    expect(await p.page.getByTestId('tube-fit-point').count()).toBe(0);
  });
});
