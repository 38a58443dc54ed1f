// The worklet's real-time factor inside Chromium: an OfflineAudioContext render with both slots
// running, per oversampling factor (Debian's chromium via playwright-core, Vite dev server).
// Also a scripted editing session at the live default (design loads, tube changes, quality
// changes, pot glides) timed quantum by quantum. Prints JSON. Run: npx tsx bench/worklet.browser.bench.ts --json
import { existsSync } from 'node:fs';
import { CHROMIUM, openHarness, startServer, type HarnessApi } from '../tests/browser/browser-env.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { DEFAULT_LIVE_FACTOR } from '../src/dsp/realtime/dual-slot-engine.ts';
import type { OversamplingFactor } from '../src/dsp/oversampling/oversampler.ts';
import type { ProcessorInit, ToProcessor } from '../src/dsp/realtime/messages.ts';
import type { Part } from '../src/dsp/circuit/design.ts';

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
  // Editing session at the live default: every event's quantum and the 7 after it are timed.
  const part = (d: typeof A, id: string): Part => { const p = d.parts.find((q) => q.id === id); if (!p) throw new Error(id); return p; };
  const retube = (d: typeof A, id: string, type: string): Part => ({ ...part(d, id), type } as Part);
  const pot = (d: typeof A, id: string, position: number): Part => ({ ...part(d, id), position } as Part);
  const SP = TEMPLATES['single-pentode']!;
  const script: { quantum: number; messages: ToProcessor[] }[] = [
    { quantum: 100, messages: [{ type: 'load-design', slot: 'A', design: SP }] },
    { quantum: 200, messages: [{ type: 'load-design', slot: 'B', design: A }] },
    { quantum: 300, messages: [{ type: 'load-design', slot: 'A', design: A }, { type: 'load-design', slot: 'B', design: B }] },
    { quantum: 400, messages: [{ type: 'set-part', slot: 'A', part: retube(A, 'V2', '12AT7') }] },
    { quantum: 500, messages: [{ type: 'set-part', slot: 'B', part: retube(B, 'V1', '12AU7') }] },
    { quantum: 600, messages: [{ type: 'set-quality', factor: 2 }] },
    { quantum: 700, messages: [{ type: 'set-quality', factor: DEFAULT_LIVE_FACTOR }] },
    { quantum: 800, messages: [{ type: 'set-part', slot: 'A', part: pot(A, 'VOL', 0.3) }] },
    { quantum: 900, messages: [{ type: 'set-part', slot: 'A', part: pot(A, 'TONE', 0.9) }, { type: 'set-part', slot: 'B', part: pot(B, 'VOL', 0.8) }] },
    { quantum: 1000, messages: [{ type: 'monitor', target: 'B' }, { type: 'set-part', slot: 'B', part: retube(B, 'V2', '6DJ8') }] },
    { quantum: 1100, messages: [{ type: 'reset' }] },
  ];
  const quiet = [40, 60, 150, 250, 350, 450, 550, 750, 850, 1150, 1200];
  const sessionSamples = 1300 * 128;
  const xs = Array.from({ length: sessionSamples }, (_, k) => 0.7 * Math.sin((2 * Math.PI * 196 * k) / FS));
  const sessionInit: ProcessorInit = { factor: DEFAULT_LIVE_FACTOR, meterHz: 30, initial: [
    { type: 'load-design', slot: 'A', design: A }, { type: 'load-design', slot: 'B', design: B },
    { type: 'set-input-calibration', voltsAtFullScale: 0.5 }, { type: 'set-output-scale', slot: 'A', voltsAtFullScale: 50 }, { type: 'set-output-scale', slot: 'B', voltsAtFullScale: 50 },
  ] };
  const session = await browser.page.evaluate(([i, s, ev, q]) => (window as unknown as { vw: HarnessApi }).vw.editSession(i, s, 48000, ev, q), [sessionInit, xs, script, quiet] as const);
  const budgetMs = (128 / FS) * 1000;
  const sorted = [...session.quietMs].sort((p, q) => p - q);
  const quietMedianMs = sorted[Math.floor(sorted.length / 2)] ?? 0;
  const atDefault = results.find((r) => r.factor === DEFAULT_LIVE_FACTOR);
  const meanBlockMs = (atDefault?.loadFraction ?? 0) * budgetMs;
  const worstRawMs = Math.max(...session.editMs);
  // a timed quantum = its processing + the suspend/resume hand-over; the hand-over is the quiet
  // quanta's median minus an average quantum's processing
  const handOverMs = Math.max(0, quietMedianMs - meanBlockMs);
  const worstEditBlockMs = worstRawMs - handOverMs;
  const version = browser.context.browser()?.version() ?? 'unknown';
  console.log(JSON.stringify({
    command: 'npx tsx bench/worklet.browser.bench.ts --json', chromium: version, sampleRateHz: FS, blockSize: 128,
    designs: { A: A.name, B: B.name }, slotsRunning: 2, defaultLiveFactor: DEFAULT_LIVE_FACTOR,
    note: 'OfflineAudioContext render time with the worklet, both slots; realTimeFactor = audio seconds per wall second, loadFraction its inverse; processorReportedLoadFraction = mean of the meter reports (the processor timing itself)',
    results,
    loadAtDefault: atDefault?.loadFraction ?? null,
    worstEditBlockFraction: worstEditBlockMs / budgetMs,
    editSession: {
      note: 'offline render suspended at every quantum of each edit and the 7 after it; a timed quantum includes the suspend/resume hand-over between threads, estimated from quiet quanta and subtracted (worstEditBlockFraction); the raw worst is an upper bound',
      events: script.length, timedEditQuanta: session.editMs.length, budgetMs, worstRawMs, quietMedianMs, handOverMs,
      worstRawFraction: worstRawMs / budgetMs, errors: session.errors,
      worstRawMsPerEvent: script.map((e, k) => ({ quantum: e.quantum, messages: e.messages.map((m) => m.type).join('+'), worstMs: Math.max(...session.editMs.slice(8 * k, 8 * k + 8)) })),
    },
    goals: {
      loadAtDefault: { atMost: 0.2, met: atDefault ? atDefault.loadFraction <= 0.2 : false },
      worstEditBlockFraction: { atMost: 0.5, met: worstEditBlockMs / budgetMs <= 0.5 },
      longRange: { loadAtDefaultBelow: 0.1, met: atDefault ? atDefault.loadFraction < 0.1 : false },
    },
  }, null, 2));
} finally {
  await browser.close();
  await server.close();
}
