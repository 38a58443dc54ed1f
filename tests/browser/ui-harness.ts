// Shared set-up for the workspace's browser tests: a Vite dev server on a free 127.0.0.1
// port and headless Chromium through playwright-core (flags from /work/shared/notes/toolchain.md).
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createServer, type ViteDevServer } from 'vite';
import { chromium, type BrowserContext, type Page } from 'playwright-core';

export const CHROMIUM = '/usr/bin/chromium';
export const CHROMIUM_ARGS = [
  '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking',
  '--disable-component-update', '--disable-sync', '--autoplay-policy=no-user-gesture-required',
  '--use-fake-ui-for-media-stream', '--use-fake-device-for-media-stream',
];

export interface Harness {
  readonly url: string;
  readonly context: BrowserContext;
  readonly page: Page;
  readonly consoleErrors: string[];
  close(): Promise<void>;
}

export async function startHarness(viewport = { width: 1280, height: 800 }): Promise<Harness> {
  const server: ViteDevServer = await createServer({ root: process.cwd(), logLevel: 'error', server: { host: '127.0.0.1', port: 0, strictPort: false } });
  await server.listen();
  const addr = server.httpServer?.address();
  if (!addr || typeof addr === 'string') throw new Error('vite server has no address');
  const url = `http://127.0.0.1:${addr.port}/`;
  const dir = mkdtempSync(join(tmpdir(), 'vw-ui-'));
  const context = await chromium.launchPersistentContext(dir, { executablePath: CHROMIUM, headless: true, args: CHROMIUM_ARGS, viewport, acceptDownloads: true });
  const page = context.pages()[0] ?? (await context.newPage());
  const consoleErrors: string[] = [];
  page.on('console', (m) => { if (m.type() === 'error') consoleErrors.push(m.text()); });
  page.on('pageerror', (e) => consoleErrors.push(String(e)));
  return {
    url, context, page, consoleErrors,
    async close() { await context.close(); await server.close(); rmSync(dir, { recursive: true, force: true }); },
  };
}

/** Open the page, accept the first-run caution, and wait for the operating point to show. */
export async function openWorkspace(h: Harness, hash = ''): Promise<number> {
  await h.page.goto(h.url + hash);
  await h.page.waitForFunction(() => (window as unknown as { __vwReadyMs?: number }).__vwReadyMs !== undefined, null, { timeout: 20_000 });
  const ready = await h.page.evaluate(() => (window as unknown as { __vwReadyMs: number }).__vwReadyMs);
  const accept = h.page.getByRole('button', { name: 'I understand' });
  if (await accept.isVisible()) await accept.click();
  return ready;
}
