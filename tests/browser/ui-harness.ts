// Shared set-up for the workspace's browser tests: one Vite dev server on a free 127.0.0.1 port
// and one headless Chromium (playwright-core, Debian's /usr/bin/chromium), with a fresh browser
// context (its own storage, so its own first-run state and saved workspace) for every case.
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { CHROMIUM, CHROMIUM_ARGS, REPO, startServer } from './browser-env.ts';

/**
 * Where screenshots go: an ignored folder (test-results/screenshots) under `npm test`, so a test
 * run never changes tracked files. `npm run screenshots` sets VW_SCREENSHOT_DIR=docs/screenshots
 * to refresh the curated ones in the docs by hand.
 */
export const SCREENSHOT_DIR = join(REPO, process.env.VW_SCREENSHOT_DIR ?? 'test-results/screenshots');

export interface Workspace {
  readonly url: string;
  readonly context: BrowserContext;
  readonly page: Page;
  readonly consoleErrors: string[];
  readonly failedUrls: string[];
  screenshot(name: string, fullPage?: boolean): Promise<void>;
  close(): Promise<void>;
}

export interface UiHarness {
  readonly url: string;
  /** A new page in a new browser context (nothing shared with earlier cases). */
  newWorkspace(viewport?: { width: number; height: number }): Promise<Workspace>;
  close(): Promise<void>;
}

export async function startUiHarness(): Promise<UiHarness> {
  const { server, origin } = await startServer();
  const url = `${origin}/`;
  const args = [...CHROMIUM_ARGS, '--use-fake-ui-for-media-stream', '--use-fake-device-for-media-stream'];
  const browser: Browser = await chromium.launch({ executablePath: CHROMIUM, headless: true, args });
  mkdirSync(SCREENSHOT_DIR, { recursive: true });
  return {
    url,
    async newWorkspace(viewport = { width: 1280, height: 800 }) {
      const context = await browser.newContext({ viewport, acceptDownloads: true });
      const page = await context.newPage();
      const consoleErrors: string[] = [],
        failedUrls: string[] = [];
      page.on('console', (m) => {
        if (m.type() === 'error') consoleErrors.push(m.text());
      });
      page.on('pageerror', (e) => consoleErrors.push(String(e)));
      page.on('response', (r) => {
        if (r.status() >= 400) failedUrls.push(r.url());
      });
      return {
        url,
        context,
        page,
        consoleErrors,
        failedUrls,
        async screenshot(name, fullPage = false) {
          await page.screenshot({ path: join(SCREENSHOT_DIR, `${name}.png`), fullPage });
        },
        async close() {
          await context.close();
        },
      };
    },
    async close() {
      await browser.close();
      await server.close();
    },
  };
}

/**
 * Open the page, accept the first-run caution, wait for the operating point to show, and switch
 * the overload guard off unless asked to keep it: on a 2-core machine running the whole suite the
 * audio thread can be loaded enough for the guard to lower the quality in the middle of a case.
 * Returns the page's own ready time (logged, never asserted: a wall-clock figure belongs in bench/).
 */
export async function openWorkspace(w: Workspace, options: { hash?: string; keepOverloadGuard?: boolean } = {}): Promise<number> {
  await w.page.goto(w.url + (options.hash ?? ''));
  await w.page.waitForFunction(() => (window as unknown as { __vwReadyMs?: number }).__vwReadyMs !== undefined, null, { timeout: 30_000 });
  const ready = await w.page.evaluate(() => (window as unknown as { __vwReadyMs: number }).__vwReadyMs);
  const accept = w.page.getByRole('button', { name: 'I understand' });
  if (await accept.isVisible()) await accept.click();
  if (!options.keepOverloadGuard) {
    const guard = w.page.getByLabel('lower quality on overload');
    await guard.uncheck();
    await w.page.waitForFunction(
      () => (window as unknown as { __valvewright?: { port: { overloadGuardOn(): boolean } } }).__valvewright?.port.overloadGuardOn() === false,
    );
  }
  return ready;
}
