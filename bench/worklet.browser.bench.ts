// The worklet's real-time factor inside Chromium: an OfflineAudioContext render with both slots
// running, per oversampling factor (Debian's chromium via playwright-core, Vite dev server).
// Prints JSON. Run: npx tsx bench/worklet.browser.bench.ts
import { existsSync } from 'node:fs';
import { CHROMIUM, openHarness, startServer, type HarnessApi } from '../tests/browser/browser-env.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { DEFAULT_LIVE_FACTOR } from '../src/dsp/realtime/dual-slot-engine.ts';
import type { OversamplingFactor } from '../src/dsp/oversampling/oversampler.ts';
import type { ProcessorInit } from '../src/dsp/realtime/messages.ts';

if (!existsSync(CHROMIUM)) { console.error(`${CHROMIUM} not found: apt-get install -y chromium`); process.exit(1); }
const FS = 48000;
const FACTORS: readonly OversamplingFactor[] = [1, 2, 4, 8];
const A = TEMPLATES['pentode-triode']!, B = TEMPLATES['triode-triode']!;
const { server, origin } = await startServer();
const browser = await openHarness(origin);
try {
  const results = [];
  for (const factor of FACTORS) {
    const seconds = factor >= 8 ? 1 : 2;
    const x = Array.from({ length: seconds * FS }, (_, k) => 0.7 * Math.sin((2 * Math.PI * 196 * k) / FS));
    const init: ProcessorInit = { factor, meterHz: 30, initial: [
      { type: 'load-design', slot: 'A', design: A }, { type: 'load-design', slot: 'B', design: B },
      { type: 'set-input-calibration', voltsAtFullScale: 0.5 }, { type: 'set-output-scale', slot: 'A', voltsAtFullScale: 50 }, { type: 'set-output-scale', slot: 'B', voltsAtFullScale: 50 },
    ] };
    await browser.page.evaluate(([i, s]) => (window as unknown as { vw: HarnessApi }).vw.renderWorklet(i, s.slice(0, 4800), 48000), [init, x] as const); // warm-up
    const r = await browser.page.evaluate(([i, s]) => (window as unknown as { vw: HarnessApi }).vw.renderWorklet(i, s, 48000), [init, x] as const);
    const loads = r.messages.flatMap((m) => (m.type === 'meter' && typeof m.loadFraction === 'number' ? [m.loadFraction] : []));
    results.push({
      factor, audioSeconds: seconds, renderMs: r.renderMs, realTimeFactor: (seconds * 1000) / r.renderMs, loadFraction: r.renderMs / (seconds * 1000),
      processorReportedLoadFraction: loads.length ? loads.slice(2).reduce((s, v) => s + v, 0) / Math.max(1, loads.length - 2) : null,
    });
  }
  const version = browser.context.browser()?.version() ?? 'unknown';
  console.log(JSON.stringify({
    command: 'npx tsx bench/worklet.browser.bench.ts', chromium: version, sampleRateHz: FS, blockSize: 128,
    designs: { A: A.name, B: B.name }, slotsRunning: 2, defaultLiveFactor: DEFAULT_LIVE_FACTOR,
    note: 'OfflineAudioContext render time with the worklet, both slots; realTimeFactor = audio seconds per wall second, loadFraction its inverse; processorReportedLoadFraction = mean of the meter reports (the processor timing itself)',
    results,
    goal: (() => {
      // issue goal: both slots under 10 % of the audio thread's budget at the default quality
      const atDefault = results.find((r) => r.factor === DEFAULT_LIVE_FACTOR);
      return { loadFractionBelow: 0.1, atDefaultFactor: atDefault?.loadFraction ?? null, met: atDefault ? atDefault.loadFraction < 0.1 : false };
    })(),
  }, null, 2));
} finally {
  await browser.close();
  await server.close();
}
