// The workspace on a 1024x640 laptop screen (headless Chromium): the schematic, the part editor,
// the transport and the A/B controls are on screen together; the header is one row; no text is
// drawn smaller than 11 px (computed font sizes, SVG text multiplied by its drawing scale).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { openWorkspace, startUiHarness, type UiHarness, type Workspace } from './ui-harness.ts';

let harness: UiHarness;
let w: Workspace | null = null;

beforeAll(async () => {
  harness = await startUiHarness();
}, 120_000);
afterAll(async () => {
  await w?.close();
  await harness?.close();
});

/** Smallest rendered text size among visible elements that hold text, with the offender. */
function smallestText(p: Page) {
  return p.evaluate(() => {
    let min = Infinity,
      where = '';
    const all = Array.from(document.querySelectorAll('body *'));
    for (const el of all) {
      const own = Array.from(el.childNodes).some((n) => n.nodeType === Node.TEXT_NODE && (n.textContent ?? '').trim() !== '');
      if (!own) continue;
      const r = el.getBoundingClientRect();
      if (r.width === 0 || r.height === 0 || el.closest('[hidden], .visually-hidden, option, datalist, title')) continue;
      let px = parseFloat(getComputedStyle(el).fontSize);
      if (el instanceof SVGElement) {
        const m = (el as SVGGraphicsElement).getScreenCTM?.();
        if (m) px *= Math.hypot(m.a, m.b);
      }
      if (px < min) {
        min = px;
        where = `${el.tagName.toLowerCase()}.${el.getAttribute('class') ?? ''} "${(el.textContent ?? '').trim().slice(0, 30)}"`;
      }
    }
    return { min, where };
  });
}

const inView = (p: Page, selector: string) =>
  p
    .locator(selector)
    .first()
    .evaluate((el) => {
      const r = el.getBoundingClientRect();
      return r.height > 0 && r.top >= 0 && r.bottom <= innerHeight + 0.5 && r.left >= 0 && r.right <= innerWidth + 0.5;
    });

describe('1024x640', () => {
  it('schematic, part editor, transport and A/B are on screen together; the header is one row', async () => {
    w = await harness.newWorkspace({ width: 1024, height: 640 });
    await openWorkspace(w);
    const page = w.page;
    await page.evaluate(() => scrollTo(0, 0));
    await page.locator('[data-part="R3"]').click();
    await page.evaluate(() => scrollTo(0, 0));
    const header = await page.locator('header.top').boundingBox();
    expect(header!.height).toBeLessThan(60);
    // the schematic's top part is visible (its box may scroll inside its own frame)
    const sheet = await page.locator('.sheet-box').boundingBox();
    expect(sheet!.y).toBeGreaterThanOrEqual(0);
    expect(sheet!.y + 200).toBeLessThanOrEqual(640);
    expect(await inView(page, '[data-testid="value-input"]')).toBe(true);
    expect(await inView(page, '[data-testid="play"]')).toBe(true);
    expect(await inView(page, '[role="radio"][aria-checked]')).toBe(true);
    const overflow = await page.evaluate(() => document.documentElement.scrollWidth - innerWidth);
    expect(overflow).toBeLessThanOrEqual(0);
    await w.screenshot('small-1024x640');
  });

  for (const tab of ['Listen', 'Analyses', 'See'] as const) {
    it(`no text under 11 px with the ${tab} panel open`, async () => {
      await w?.close();
      w = await harness.newWorkspace({ width: 1024, height: 640 });
      await openWorkspace(w);
      await w.page.getByRole('tab', { name: tab }).click();
      await w.page.locator('[data-part="V1"]').click();
      await w.page.locator('svg.schematic').waitFor();
      const s = await smallestText(w.page);
      expect(s.min, s.where).toBeGreaterThanOrEqual(11 - 1e-6);
    });
  }
});
