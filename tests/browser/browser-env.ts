// Shared set-up for the browser tests and the browser bench: a Vite dev server on 127.0.0.1
// and Debian's chromium driven by playwright-core (flags that keep it off the closed network and out of its first-run screens).
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { createServer, type ViteDevServer } from 'vite';
import { chromium, type BrowserContext, type Page } from 'playwright-core';

export const CHROMIUM = '/usr/bin/chromium';
export const REPO = resolve(fileURLToPath(new URL('../..', import.meta.url)));
export const HARNESS_PATH = '/tests/browser/harness.html';

/** Browser tests run when chromium is there, and always in CI (they fail there if it is missing). */
export const browserAvailable = existsSync(CHROMIUM) || Boolean(process.env.CI);
export const SKIP_REASON = `browser tests skipped: ${CHROMIUM} not found (apt-get install -y chromium; they always run with CI set)`;

export const CHROMIUM_ARGS = [
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--autoplay-policy=no-user-gesture-required',
];

export async function startServer(): Promise<{ server: ViteDevServer; origin: string }> {
  const server = await createServer({
    configFile: join(REPO, 'vite.config.ts'),
    root: REPO,
    logLevel: 'error',
    server: { host: '127.0.0.1', port: 0, strictPort: false, hmr: false, watch: null },
  });
  await server.listen();
  const addr = server.httpServer?.address();
  if (!addr || typeof addr === 'string') throw new Error('vite dev server has no TCP address');
  return { server, origin: `http://127.0.0.1:${addr.port}` };
}

export interface Browser {
  readonly context: BrowserContext;
  readonly page: Page;
  close(): Promise<void>;
}

export async function openHarness(origin: string, extraArgs: readonly string[] = []): Promise<Browser> {
  const dir = mkdtempSync(join(tmpdir(), 'vw-chromium-'));
  const context = await chromium.launchPersistentContext(dir, { executablePath: CHROMIUM, headless: true, args: [...CHROMIUM_ARGS, ...extraArgs] });
  const page = context.pages()[0] ?? (await context.newPage());
  const logs: string[] = [];
  page.on('console', (m) => {
    if (m.type() === 'error') logs.push(m.text());
  });
  page.on('pageerror', (e) => logs.push(String(e)));
  await page.goto(origin + HARNESS_PATH);
  try {
    await page.waitForFunction(() => (window as unknown as { vw?: { ready: boolean } }).vw?.ready === true, undefined, { timeout: 60_000 });
  } catch (e) {
    throw new Error(`harness page did not load: ${logs.join(' | ') || String(e)}`, { cause: e });
  }
  return {
    context,
    page,
    async close() {
      await context.close();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

/** What harness.ts puts on window.vw (arguments and results are plain data). */
export interface HarnessApi {
  requestIdRun(
    a: unknown,
    b: unknown,
    badPartB: unknown,
    retypedA: unknown,
  ): Promise<{
    loadA: string;
    errors: { message: string; requestId: number | null }[];
    loadedAfter: { slot: string; factor: number; requestId: number | null }[];
  }>;
  editSession(
    init: unknown,
    input: number[],
    rateHz: number,
    events: { quantum: number; messages: unknown[] }[],
    quiet: number[],
    window?: number,
  ): Promise<{ editMs: number[]; quietMs: number[]; renderMs: number; errors: string[] }>;
  renderWorklet(
    init: unknown,
    input: number[],
    rateHz: number,
  ): Promise<{ output: number[]; renderMs: number; messages: { type: string; loadFraction?: number }[] }>;
  renderGraph(init: unknown, input: number[], rateHz: number, ir: number[] | null): Promise<number[]>;
  takeRun(
    seconds: number,
    channel: 1 | 2 | 'mix',
  ): Promise<{ length: number; sampleRateHz: number; dropped: number; rms: number; peak: number; during: number | null; afterStop: number | null }>;
  liveSafety(design: unknown): Promise<{ safetyMuted: number; liveAfter: string; lastPeaksDbfs: number[] }>;
  idleRun(design: unknown): Promise<{ states: string[]; loadedWhileIdle: boolean; reportsAfterWake: number; idleFlags: boolean[]; changes: boolean[] }>;
  liveRun(
    design: unknown,
    seconds: number,
    options?: { deviceId?: string; channel?: 1 | 2 | 'mix' },
  ): Promise<{
    reports: { type: string; inputPeakVolts?: number; outputPeakDbfs?: number; gridVolts?: number }[];
    peakHz: number;
    peakDb: number;
    sampleRateHz: number;
    liveBefore: string;
    liveAfter: string;
    channels: number;
    inputs: number;
    error: string;
    latency: { inputSeconds: number; processingSeconds: number; outputSeconds: number; totalSeconds: number } | null;
  }>;
  liveDenied(): Promise<{ error: string; name: string; stillPlays: boolean }>;
}
