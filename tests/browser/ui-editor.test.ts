// Editing the circuit in the workspace (headless Chromium): add a part, rewire it, delete it,
// undo; build a circuit from an empty sheet until it plays; nudge a part and keep its position;
// an imported multi-tube design draws with no label on a wire and no symbol left unconnected.
// Fresh context per case (ui-harness.ts), polling on page state, never sleeping.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import type { Page } from 'playwright-core';
import { join } from 'node:path';
import { SCREENSHOT_DIR, openWorkspace, startUiHarness, type UiHarness, type Workspace } from './ui-harness.ts';
import { stageChain } from '../helpers/stages.ts';

let harness: UiHarness;
let w: Workspace | null = null;

interface Slots {
  A: { parts: { id: string; nodes: unknown }[]; output: { node: string }; sheet?: { positions?: Record<string, [number, number]> } };
  B: unknown;
}
type Win = { __valvewright: { port: { settled(): boolean; design(s: 'A' | 'B'): unknown }; slots(): Slots } };

async function fresh(viewport?: { width: number; height: number }): Promise<Workspace> {
  await w?.close();
  w = await harness.newWorkspace(viewport);
  await openWorkspace(w);
  return w;
}
const slotA = (p: Page) => p.evaluate(() => (window as unknown as Win).__valvewright.slots().A);
/** What plays is what the sheet holds (the port has slot A's design and nothing is pending). */
const playsSheet = (p: Page) =>
  p.evaluate(() => {
    const v = (window as unknown as Win).__valvewright;
    return v.port.settled() && JSON.stringify(v.port.design('A')) === JSON.stringify(v.slots().A);
  });

async function importDesign(p: Page, design: unknown, name: string): Promise<void> {
  await p.getByTestId('import-design').setInputFiles({ name, mimeType: 'application/json', buffer: Buffer.from(JSON.stringify(design)) });
  await p.getByText(new RegExp(`Imported "${(design as { name: string }).name}"`)).waitFor();
  await p.locator('svg.schematic [data-part]').first().waitFor();
}

/**
 * From the SVG as drawn: every text box against every wire segment and lead (overlaps), every
 * part terminal not on a flag against the wires (connected), and the smallest rendered font size.
 */
function sheetGeometry(p: Page) {
  return p.evaluate(() => {
    const svg = document.querySelector('svg.schematic') as SVGSVGElement;
    const m = svg.getScreenCTM()!;
    const toScreen = (x: number, y: number) => {
      const q = new DOMPoint(x, y).matrixTransform(m);
      return [q.x, q.y] as const;
    };
    const segs: [number, number, number, number, string][] = [];
    for (const pl of Array.from(svg.querySelectorAll('g.wires polyline, g.part > polyline'))) {
      const pts = (pl as SVGPolylineElement).points;
      const owner = pl.closest('g.part')?.getAttribute('data-part') ?? `net ${pl.getAttribute('data-net')}`;
      for (let i = 1; i < pts.numberOfItems; i++) {
        const a = pts.getItem(i - 1),
          b = pts.getItem(i);
        const [x1, y1] = toScreen(a.x, a.y),
          [x2, y2] = toScreen(b.x, b.y);
        segs.push([x1, y1, x2, y2, owner]);
      }
    }
    const crosses = (r: DOMRect, s: [number, number, number, number, string]) => {
      // axis-aligned segments (orthogonal wiring): a segment inside the text box, shrunk by 1 px
      const [x1, y1, x2, y2] = s;
      const L = r.left + 1,
        R = r.right - 1,
        T = r.top + 1,
        B = r.bottom - 1;
      if (Math.abs(y1 - y2) < 0.01) return y1 > T && y1 < B && Math.max(x1, x2) > L && Math.min(x1, x2) < R;
      if (Math.abs(x1 - x2) < 0.01) return x1 > L && x1 < R && Math.max(y1, y2) > T && Math.min(y1, y2) < B;
      return false;
    };
    const overlaps: string[] = [];
    let minFont = Infinity;
    for (const t of Array.from(svg.querySelectorAll('text'))) {
      if (!t.textContent) continue;
      const r = t.getBoundingClientRect();
      minFont = Math.min(minFont, parseFloat(getComputedStyle(t).fontSize) * m.a);
      for (const s of segs) if (crosses(r, s)) overlaps.push(`"${t.textContent}" on ${s[4]}`);
    }
    const unconnected: string[] = [];
    const on = (x: number, y: number, s: [number, number, number, number, string]) =>
      Math.abs((s[2] - s[0]) * (y - s[1]) - (s[3] - s[1]) * (x - s[0])) < 0.5 * Math.hypot(s[2] - s[0], s[3] - s[1]) + 1e-6 &&
      x >= Math.min(s[0], s[2]) - 0.5 &&
      x <= Math.max(s[0], s[2]) + 0.5 &&
      y >= Math.min(s[1], s[3]) - 0.5 &&
      y <= Math.max(s[1], s[3]) + 0.5;
    const wireSegs = segs.filter((s) => s[4].startsWith('net '));
    for (const c of Array.from(svg.querySelectorAll('circle.term:not(.flagged)'))) {
      const cx = Number(c.getAttribute('cx')),
        cy = Number(c.getAttribute('cy'));
      const [x, y] = toScreen(cx, cy);
      if (!wireSegs.some((s) => on(x, y, s))) unconnected.push(`${c.closest('g.part')?.getAttribute('data-part')} at node ${c.getAttribute('data-node')}`);
    }
    return { overlaps, unconnected, minFont, parts: svg.querySelectorAll('g.part').length, terms: svg.querySelectorAll('circle.term').length };
  });
}

beforeAll(async () => {
  harness = await startUiHarness();
}, 120_000);
afterAll(async () => {
  await w?.close();
  await harness?.close();
});

describe('editing the circuit', () => {
  it('adds a part, rewires it, deletes it and undoes each step; every step plays at once', async () => {
    const p = await fresh();
    const page = p.page;
    const before = await slotA(page);
    // a 1 M resistor from the second plate (p2) to a new node, then rewired to ground
    await page.getByText('Build: add parts, rename nodes, output').click();
    await page.getByTestId('add-kind').selectOption('resistor');
    await page.getByTestId('add-node-0').fill('p2');
    await page.getByTestId('add-node-1').fill('x9');
    await page.getByTestId('add-place').click();
    await expect.poll(async () => (await slotA(page)).parts.some((q) => q.id === 'R9')).toBe(true);
    // a node with one connection: the wiring check points at the part, and the sheet waits to play
    await expect.poll(() => page.getByTestId('not-playing').textContent()).toMatch(/x9/);
    await page.locator('[data-part="R9"]').waitFor();
    await page.getByTestId('lead-1').fill('0');
    await page.getByTestId('lead-1').press('Enter');
    await expect.poll(async () => JSON.stringify((await slotA(page)).parts.find((q) => q.id === 'R9')?.nodes)).toBe('["p2","0"]');
    await expect.poll(() => page.getByTestId('not-playing').count()).toBe(0);
    await expect.poll(() => playsSheet(page)).toBe(true);
    await p.screenshot('editor-added-part');
    await page.getByTestId('delete-part').click();
    await expect.poll(async () => (await slotA(page)).parts.some((q) => q.id === 'R9')).toBe(false);
    await expect.poll(() => playsSheet(page)).toBe(true);
    // undo: back to the rewired part, then the unwired one, then none (each edit one step)
    await page.getByRole('button', { name: 'Undo', exact: true }).click();
    await expect.poll(async () => JSON.stringify((await slotA(page)).parts.find((q) => q.id === 'R9')?.nodes)).toBe('["p2","0"]');
    await expect.poll(() => playsSheet(page)).toBe(true);
    await page.getByRole('button', { name: 'Undo', exact: true }).click();
    await expect.poll(async () => JSON.stringify((await slotA(page)).parts.find((q) => q.id === 'R9')?.nodes)).toBe('["p2","x9"]');
    await page.getByRole('button', { name: 'Undo', exact: true }).click();
    await expect.poll(async () => JSON.stringify(await slotA(page))).toBe(JSON.stringify(before));
    // the Delete key removes the selected part; Ctrl+Z brings it back
    await page.locator('[data-part="R8"]').click();
    await page.keyboard.press('Delete');
    await expect.poll(async () => (await slotA(page)).parts.some((q) => q.id === 'R8')).toBe(false);
    await page.keyboard.press('Control+z');
    await expect.poll(async () => JSON.stringify(await slotA(page))).toBe(JSON.stringify(before));
    expect(p.consoleErrors).toEqual([]);
  });

  it('builds a stage from an empty sheet, with a fitted tube, until it plays and sounds', async () => {
    const p = await fresh();
    const page = p.page;
    await page.getByRole('combobox', { name: 'Starting circuit' }).selectOption('(empty)');
    await expect.poll(async () => (await slotA(page)).parts.length).toBe(1);
    await expect.poll(() => page.getByTestId('not-playing').textContent()).toMatch(/bp/);
    const place = async (kind: string, nodes: string[], tube?: string) => {
      await page.getByTestId('add-kind').selectOption(kind);
      if (tube) await page.getByTestId('add-tube-type').selectOption(tube);
      for (const [i, n] of nodes.entries()) await page.getByTestId(`add-node-${i}`).fill(n);
      const count = (await slotA(page)).parts.length;
      await page.getByTestId('add-place').click();
      await expect.poll(async () => (await slotA(page)).parts.length).toBe(count + 1);
    };
    // a fitted tube file (valvewright.tube.v1) with Koren's published 12AX7 parameters (from memory)
    await page.getByTestId('add-kind').selectOption('tube');
    const file = {
      schema: 'valvewright.tube.v1',
      type: 'MY-12AX7',
      kind: 'triode',
      like: '12AX7',
      points: [],
      source: 'test',
      model: { name: 'koren-triode', mu: 100, ex: 1.4, kg1: 1060, kp: 600, kvb: 300 },
      gridCurrent: { name: 'initial-velocity', gg: 0.00031, xi: 1.5, cathodeKelvin: 1050, onsetVolts: -0.49 },
    };
    await page
      .getByTestId('add-fitted-tube')
      .setInputFiles({ name: 'my-12ax7.tube.json', mimeType: 'application/json', buffer: Buffer.from(JSON.stringify(file)) });
    await expect.poll(() => page.getByTestId('add-tube-type').inputValue()).toBe('MY-12AX7');
    await place('tube', ['p1', 'in', 'k1'], 'MY-12AX7');
    await place('resistor', ['bp', 'p1']);
    await place('resistor', ['k1', '0']);
    await place('capacitor', ['p1', 'out']);
    await place('pot', ['out', 'vw', '0']);
    await page.getByTestId('output-node').selectOption('vw');
    await expect.poll(async () => (await slotA(page)).output.node).toBe('vw');
    await expect.poll(() => page.getByTestId('not-playing').count()).toBe(0);
    await expect.poll(() => playsSheet(page)).toBe(true);
    await page.getByText(/V1 · MY-12AX7/).waitFor();
    await p.screenshot('editor-empty-sheet-built');
    // the audio thread knows the fitted tube: a render of slot A is finite and not silent
    await page.getByTestId('demo-select').selectOption('boiler-fifths');
    await page.getByText(/Boiler Fifths · 5\.0 s/).waitFor();
    await expect.poll(() => playsSheet(page)).toBe(true);
    const render = (slot: 'A' | 'B') =>
      page.evaluate(async (s) => {
        const r = await (
          window as unknown as { __valvewright: { port: { renderOffline(s: string, sec: number): Promise<Float32Array | null> } } }
        ).__valvewright.port.renderOffline(s, 0.6);
        return r ? Array.from(r.subarray(4800, 28800)) : [];
      }, slot);
    const out = await render('A');
    expect(out.length).toBeGreaterThan(1000);
    expect(out.every((x) => Number.isFinite(x))).toBe(true);
    const rms = Math.sqrt(out.reduce((a, x) => a + x * x, 0) / out.length);
    expect(rms).toBeGreaterThan(1e-3);
    // and it is the new circuit, not the starting one still in slot B (a refused design would leave that playing)
    const b = await render('B');
    expect(Math.sqrt(out.reduce((a, x, i) => a + (x - (b[i] ?? 0)) ** 2, 0) / out.length)).toBeGreaterThan(0.05 * rms);
    expect(p.consoleErrors).toEqual([]);
  });

  it('a stage added to a starting circuit plays, and its supply, spread and parts list follow it', async () => {
    const p = await fresh();
    const page = p.page;
    await page.getByText('Build: add parts, rename nodes, output').click();
    await page.getByTestId('stage-add').click();
    await expect.poll(async () => (await slotA(page)).parts.some((q) => q.id === 'V3')).toBe(true);
    await expect.poll(() => page.getByTestId('not-playing').count()).toBe(0);
    await expect.poll(() => playsSheet(page)).toBe(true);
    await page.getByRole('tab', { name: 'Analyses' }).click();
    await page.getByRole('button', { name: 'Add a supply section' }).click();
    await page.getByTestId('supply-loaded').waitFor();
    await page.getByRole('tab', { name: 'Spread' }).click();
    await page.getByTestId('spread-runs').fill('5');
    await page.getByTestId('spread-run').click();
    await page.getByTestId('spread-report').waitFor({ timeout: 60_000 });
    await expect.poll(() => page.getByRole('img', { name: /V3 plate voltage: 5 runs/ }).count()).toBe(1);
    await page.getByRole('tab', { name: 'Parts list & SPICE' }).click();
    const download = page.waitForEvent('download');
    await page.getByTestId('parts-csv').click();
    const csv = readFileSync(await (await download).path(), 'utf8');
    expect(csv.split(/\r?\n/).some((r) => r.startsWith('V3,'))).toBe(true);
    await p.screenshot('editor-stage-added');
    expect(p.consoleErrors).toEqual([]);
  });

  it('a nudged part keeps its position in the design and in the exported file', async () => {
    const p = await fresh();
    const page = p.page;
    await page.locator('[data-part="R3"] rect.hit').scrollIntoViewIfNeeded();
    const box = await page.locator('[data-part="R3"] rect.hit').boundingBox();
    if (!box) throw new Error('R3 is not drawn');
    await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
    await page.mouse.down();
    await page.mouse.move(box.x + box.width / 2 + 30, box.y + box.height / 2 + 40, { steps: 5 });
    await page.mouse.up();
    await expect.poll(async () => (await slotA(page)).sheet?.positions?.R3 ?? null).not.toBeNull();
    const pos = (await slotA(page)).sheet!.positions!.R3!;
    expect(Math.abs(pos[0]) + Math.abs(pos[1])).toBeGreaterThan(0);
    const download = page.waitForEvent('download');
    await page.getByRole('button', { name: 'Export JSON' }).click();
    const exported = JSON.parse(readFileSync(await (await download).path(), 'utf8')) as Slots['A'];
    expect(exported.sheet?.positions?.R3).toEqual(pos);
  });

  for (const stages of [3, 4, 6]) {
    it(`an imported ${stages}-tube design draws with no label on a wire, no symbol unconnected, no text under 11 px`, async () => {
      const p = await fresh(stages === 4 ? { width: 1024, height: 640 } : undefined);
      await importDesign(p.page, stageChain(stages, `Chain of ${stages}`), `chain-${stages}.json`);
      await expect.poll(() => p.page.locator('svg.schematic g.part').count()).toBe(stageChain(stages).parts.length);
      const g = await sheetGeometry(p.page);
      await p.screenshot(`editor-import-${stages}-tubes`);
      await p.page.locator('.sheet-box').screenshot({ path: join(SCREENSHOT_DIR, `editor-sheet-${stages}-tubes.png`) });
      expect(g.overlaps).toEqual([]);
      expect(g.unconnected).toEqual([]);
      expect(g.terms).toBeGreaterThan(2 * g.parts);
      expect(g.minFont).toBeGreaterThanOrEqual(11);
      expect(p.consoleErrors).toEqual([]);
    });
  }
});
