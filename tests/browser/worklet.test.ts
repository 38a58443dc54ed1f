// The worklet and the Tone.js graph in headless Chromium (Debian's /usr/bin/chromium through
// playwright-core), served by a Vite dev server on 127.0.0.1.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { ViteDevServer } from 'vite';
import { browserAvailable, openHarness, SKIP_REASON, startServer, type Browser, type HarnessApi } from './browser-env.ts';
import { installShim, makeProcessor } from '../helpers/worklet-shim.ts';
import { TEMPLATES } from '../../src/dsp/circuit/templates.ts';
import { designCircuit } from '../../src/dsp/circuit/design.ts';
import { OversampledCircuit } from '../../src/dsp/render/oversampled.ts';
import { DEFAULT_LIVE_FACTOR } from '../../src/dsp/realtime/dual-slot-engine.ts';
import type { ProcessorInit, ToProcessor } from '../../src/dsp/realtime/messages.ts';

if (!browserAvailable) console.warn(SKIP_REASON);

const FS = 48000;
const TT = TEMPLATES['triode-triode']!;
const PT = TEMPLATES['pentode-triode']!;

/** 16-bit PCM mono WAV (RIFF/WAVE, format 1), written by hand. */
/** 16-bit PCM WAV of one or more channels (interleaved). */
function wav16(samples: Float32Array | readonly Float32Array[], rateHz: number): Buffer {
  const chans = samples instanceof Float32Array ? [samples] : samples;
  const nc = chans.length,
    n = chans[0]!.length,
    bytes = n * nc * 2;
  const b = Buffer.alloc(44 + bytes);
  b.write('RIFF', 0);
  b.writeUInt32LE(36 + bytes, 4);
  b.write('WAVE', 8);
  b.write('fmt ', 12);
  b.writeUInt32LE(16, 16);
  b.writeUInt16LE(1, 20);
  b.writeUInt16LE(nc, 22);
  b.writeUInt32LE(rateHz, 24);
  b.writeUInt32LE(rateHz * 2 * nc, 28);
  b.writeUInt16LE(2 * nc, 32);
  b.writeUInt16LE(16, 34);
  b.write('data', 36);
  b.writeUInt32LE(bytes, 40);
  for (let k = 0; k < n; k++) for (let c = 0; c < nc; c++) b.writeInt16LE(Math.round(Math.max(-1, Math.min(1, chans[c]![k]!)) * 32767), 44 + 2 * (k * nc + c));
  return b;
}

describe.skipIf(!browserAvailable)('in headless Chromium', () => {
  let server: ViteDevServer;
  let origin = '';
  let browser: Browser;
  const tmp = mkdtempSync(join(tmpdir(), 'vw-browser-'));
  const api = <K extends keyof HarnessApi>(name: K, ...args: Parameters<HarnessApi[K]>) =>
    browser.page.evaluate(([n, a]) => (window as unknown as { vw: Record<string, (...x: unknown[]) => unknown> }).vw[n as string]!(...(a as unknown[])), [
      name,
      args,
    ] as const) as ReturnType<HarnessApi[K]>;

  beforeAll(async () => {
    await installShim(FS);
    ({ server, origin } = await startServer());
    browser = await openHarness(origin);
  });
  afterAll(async () => {
    await browser?.close();
    await server?.close();
    rmSync(tmp, { recursive: true, force: true });
  });

  it('(a) the worklet in an OfflineAudioContext equals the Node render of the same processor within 1e-6', async () => {
    const n = Math.round(0.5 * FS);
    let seed = 12345;
    const noise = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648 - 0.5) * 0.05;
    const x = Float32Array.from({ length: n }, (_, k) => 0.6 * Math.sin((2 * Math.PI * 220 * k) / FS) + noise());
    for (const monitor of ['A', 'B'] as const) {
      const init: ProcessorInit = {
        meterHz: 0,
        initial: [
          { type: 'load-design', slot: 'A', design: TT },
          { type: 'load-design', slot: 'B', design: PT },
          { type: 'set-input-calibration', voltsAtFullScale: 0.3 },
          { type: 'set-output-scale', slot: 'A', voltsAtFullScale: 50 },
          { type: 'set-output-scale', slot: 'B', voltsAtFullScale: 50 },
          { type: 'monitor', target: monitor },
        ] satisfies ToProcessor[],
      };
      const node = makeProcessor(init, FS).run(x, 128);
      const { output } = await api('renderWorklet', init, Array.from(x), FS);
      expect(output).toHaveLength(n);
      let worst = 0,
        energy = 0;
      for (let k = 0; k < n; k++) {
        worst = Math.max(worst, Math.abs(output[k]! - node[k]!));
        energy += node[k]! ** 2;
      }
      console.log(`browser vs Node, monitor ${monitor}: max |difference| ${worst.toExponential(2)}`);
      expect(Math.sqrt(energy / n)).toBeGreaterThan(0.05); // a real signal, not silence on both sides
      expect(worst).toBeLessThan(1e-6);
    }
  });

  it('(b) live input from the fake capture device comes out of the processor', async () => {
    // 440 Hz at half scale, 4 s (Chromium loops the file).
    const rate = 44100;
    const tone = Float32Array.from({ length: rate * 4 }, (_, k) => 0.5 * Math.sin((2 * Math.PI * 440 * k) / rate));
    const file = join(tmp, 'capture.wav');
    writeFileSync(file, wav16(tone, rate));
    const live = await openHarness(origin, [
      '--use-fake-ui-for-media-stream',
      '--use-fake-device-for-media-stream',
      `--use-file-for-fake-audio-capture=${file}`,
    ]);
    try {
      const r = await live.page.evaluate((d) => (window as unknown as { vw: HarnessApi }).vw.liveRun(d, 1.5), TT);
      expect(r.liveBefore).toBe('muted'); // live input starts muted
      expect(r.liveAfter).toBe('on');
      // the live path's delay, by part: the processing share is the oversampling filters' latency
      // at the live default (DEFAULT_LIVE_FACTOR; under 1 ms, bench/alias.bench.ts)
      const lat = r.latency!;
      console.log(
        `live latency: input ${(lat.inputSeconds * 1e3).toFixed(2)} ms, processing ${(lat.processingSeconds * 1e3).toFixed(3)} ms, output ${(lat.outputSeconds * 1e3).toFixed(2)} ms`,
      );
      const want = new OversampledCircuit(designCircuit(TT), r.sampleRateHz, DEFAULT_LIVE_FACTOR).latencySamples / r.sampleRateHz;
      expect(Math.abs(lat.processingSeconds - want)).toBeLessThan(1e-9);
      expect(lat.processingSeconds).toBeLessThan(1e-3);
      for (const x of [lat.inputSeconds, lat.outputSeconds]) {
        expect(x).toBeGreaterThanOrEqual(0);
        expect(x).toBeLessThan(0.5);
      }
      expect(lat.totalSeconds).toBeCloseTo(lat.inputSeconds + lat.processingSeconds + lat.outputSeconds, 12);
      const meters = r.reports.filter((m) => m.type === 'meter');
      expect(meters.length).toBeGreaterThan(20); // ~30 Hz for 1.5 s
      const inPeak = Math.max(...meters.map((m) => m.inputPeakVolts ?? 0));
      const outPeak = Math.max(...meters.map((m) => m.outputPeakDbfs ?? -200));
      console.log(
        `live: input peak ${inPeak.toFixed(3)} V, output peak ${outPeak.toFixed(1)} dBFS, spectrum peak ${r.peakHz.toFixed(0)} Hz at ${r.sampleRateHz} Hz`,
      );
      // 0.5 full scale x 0.5 V at full scale = 0.25 V at the circuit input (processing off, so unchanged but for 16-bit rounding)
      expect(inPeak).toBeGreaterThan(0.2);
      expect(inPeak).toBeLessThan(0.3);
      expect(outPeak).toBeGreaterThan(-30);
      expect(outPeak).toBeLessThanOrEqual(-1 + 1e-3); // safety limiter ceiling
      // the output's strongest bin is a harmonic of the 440 Hz input (a distorting circuit makes only
      // harmonics of a steady sine; grid-leak bias is asymmetric, so the 2nd may lead)
      const h = Math.max(1, Math.round(r.peakHz / 440));
      expect(Math.abs(r.peakHz - h * 440)).toBeLessThan(3 * (r.sampleRateHz / 4096));
      // the same tone turned up until the output sits in the limiter (as runaway feedback would):
      // muted once after about a second, and the live input is left muted for the user to undo
      const s = await live.page.evaluate((d) => (window as unknown as { vw: HarnessApi }).vw.liveSafety(d), TT);
      console.log(`live safety: ${s.safetyMuted} mute(s), live ${s.liveAfter}, last output peaks ${s.lastPeaksDbfs.map((x) => x.toFixed(0)).join(' ')} dBFS`);
      expect(s.safetyMuted).toBe(1);
      expect(s.liveAfter).toBe('muted');
      for (const p of s.lastPeaksDbfs) expect(p).toBeLessThan(-60);
    } finally {
      await live.close();
    }
  });

  it("(b3) an interface's input 1 or 2 on its own, or both mixed, from a two-channel capture", async () => {
    // input 1: 440 Hz at half scale; input 2: 660 Hz at 0.2 of full scale (a guitar and something else)
    const rate = 48000;
    const left = Float32Array.from({ length: rate * 4 }, (_, k) => 0.5 * Math.sin((2 * Math.PI * 440 * k) / rate));
    const right = Float32Array.from({ length: rate * 4 }, (_, k) => 0.2 * Math.sin((2 * Math.PI * 660 * k) / rate));
    const file = join(tmp, 'capture-stereo.wav');
    writeFileSync(file, wav16([left, right], rate));
    const live = await openHarness(origin, [
      '--use-fake-ui-for-media-stream',
      '--use-fake-device-for-media-stream',
      `--use-file-for-fake-audio-capture=${file}`,
    ]);
    try {
      const run = (channel: 1 | 2 | 'mix') =>
        live.page.evaluate(([d, c]) => (window as unknown as { vw: HarnessApi }).vw.liveRun(d, 1.0, { channel: c }), [TT, channel] as const);
      const peak = (r: Awaited<ReturnType<typeof run>>) => Math.max(...r.reports.filter((m) => m.type === 'meter').map((m) => m.inputPeakVolts ?? 0));
      const one = await run(1),
        two = await run(2),
        mix = await run('mix');
      console.log(
        `capture channels ${one.channels}, inputs listed ${one.inputs}; input peaks: 1 ${peak(one).toFixed(3)} V, 2 ${peak(two).toFixed(3)} V, mixed ${peak(mix).toFixed(3)} V; errors: "${one.error}" "${two.error}" "${mix.error}"`,
      );
      expect(one.error).toBe('');
      expect(one.inputs).toBeGreaterThan(0);
      // 0.5 V at full scale (liveRun's calibration): input 1 alone peaks at 0.25 V
      expect(peak(one)).toBeGreaterThan(0.23);
      expect(peak(one)).toBeLessThan(0.27);
      expect(Math.abs(one.peakHz - Math.max(1, Math.round(one.peakHz / 440)) * 440)).toBeLessThan(3 * (one.sampleRateHz / 4096));
      expect(one.channels).toBe(2);
      // input 2 alone peaks at 0.1 V and the circuit's output is made of 660 Hz harmonics
      expect(two.error).toBe('');
      expect(peak(two)).toBeGreaterThan(0.09);
      expect(peak(two)).toBeLessThan(0.11);
      expect(Math.abs(two.peakHz - Math.max(1, Math.round(two.peakHz / 660)) * 660)).toBeLessThan(3 * (two.sampleRateHz / 4096));
      // mixed: the average of the two (Web Audio's stereo-to-mono down-mix, 0.5 (L + R)), peak up to 0.175 V
      expect(peak(mix)).toBeGreaterThan(0.13);
      expect(peak(mix)).toBeLessThan(0.18);
      // a take of input 2 records the DI itself: 0.2 FS sine, rms 0.2/sqrt(2) = 0.1414, for as long as it ran
      const take = await live.page.evaluate(() => (window as unknown as { vw: HarnessApi }).vw.takeRun(1.0, 2));
      console.log(
        `take: ${take.length} samples at ${take.sampleRateHz} Hz, rms ${take.rms.toFixed(4)}, peak ${take.peak.toFixed(4)}, dropped ${take.dropped}, ${take.during?.toFixed(2)} s while recording`,
      );
      expect(take.dropped).toBe(0);
      // the harness stops the take once the recorder counts 1 s (polled, not slept): the take holds
      // at least what the recorder counted while it ran, whatever the wall clock did
      expect(take.during).toBeGreaterThanOrEqual(1.0);
      expect(take.length / take.sampleRateHz).toBeGreaterThanOrEqual(take.during! - 1e-3);
      expect(Math.abs(take.rms - 0.2 / Math.SQRT2)).toBeLessThan(0.003);
      expect(take.peak).toBeLessThan(0.2 + 1e-3);
      expect(take.afterStop).toBeNull();
    } finally {
      await live.close();
    }
  });

  it('(d) an idle engine suspends its context, and a message (a design load) wakes it and is applied', async () => {
    const r = await api('idleRun', TT);
    console.log(`idle: context states ${r.states.join(' -> ')}, meter reports after the wake: ${r.reportsAfterWake}`);
    expect(r.states).toEqual(['running', 'suspended', 'running', 'suspended']);
    expect(r.idleFlags).toEqual([false, true, false, true]);
    // the change event the workspace listens to fires for each transition (after the first start)
    const transitions = r.changes.filter((c, k) => k === 0 || c !== r.changes[k - 1]);
    expect(transitions.slice(transitions.indexOf(true))).toEqual([true, false, true]);
    expect(r.loadedWhileIdle).toBe(true);
    expect(r.reportsAfterWake).toBeGreaterThan(3); // reports flow again once it is awake (the harness waits for them)
  });

  it('(b2) a denied microphone gives one clear error and the player still works', async () => {
    const denied = await openHarness(origin, ['--deny-permission-prompts']);
    try {
      const r = await denied.page.evaluate(() => (window as unknown as { vw: HarnessApi }).vw.liveDenied());
      expect(r.name).toBe('LiveInputError');
      expect(r.error).toMatch(/denied|no audio input/);
      expect(r.error).not.toContain('\n');
      expect(r.stillPlays).toBe(true);
    } finally {
      await denied.close();
    }
  });

  it('(c) the Tone.js graph with a cabinet convolver renders the expected level', async () => {
    const n = 9600,
      f = 1000,
      amp = 0.5;
    const x = Array.from({ length: n }, (_, k) => amp * Math.sin((2 * Math.PI * f * k) / FS));
    // dry monitor at 1x (no filter delay): output = input convolved with the response
    const init: ProcessorInit = {
      factor: 1,
      initial: [
        { type: 'set-quality', factor: 1 },
        { type: 'monitor', target: 'dry' },
      ],
    };
    const peak = (y: number[]) => Math.max(...y.slice(2000).map(Math.abs));
    const none = await api('renderGraph', init, x, FS, null);
    const unit = await api('renderGraph', init, x, FS, [0.5]);
    const taps = [0.5, 0, 0, 0.25];
    const two = await api('renderGraph', init, x, FS, taps);
    // Convolution theorem: a sine comes out scaled by |H(e^{jw})| = |sum h_k e^{-jwk}|.
    const w = (2 * Math.PI * f) / FS;
    const gain = Math.hypot(
      taps.reduce((s, h, k) => s + h * Math.cos(w * k), 0),
      taps.reduce((s, h, k) => s - h * Math.sin(w * k), 0),
    );
    console.log(
      `cabinet: none ${peak(none).toFixed(5)}, 0.5 impulse ${peak(unit).toFixed(5)}, two taps ${peak(two).toFixed(5)} (expected ${(amp * gain).toFixed(5)})`,
    );
    // peak of a sampled 1 kHz sine at 48 kHz is within (1 - cos(pi/48)) of its amplitude
    const tol = 1 - Math.cos(Math.PI / 48) + 1e-4;
    expect(Math.abs(peak(none) / amp - 1)).toBeLessThan(tol);
    expect(Math.abs(peak(unit) / (amp * 0.5) - 1)).toBeLessThan(tol); // normalize off: the response's real gain
    expect(Math.abs(peak(two) / (amp * gain) - 1)).toBeLessThan(tol);
  });

  it("(e) replies are matched by request id: a refused set-part on slot B leaves slot A's pending load alone; tube and quality changes arrive as plans", async () => {
    const r1 = PT.parts.find((p) => p.kind === 'resistor');
    const v2 = PT.parts.find((p) => p.id === 'V2');
    if (!r1 || r1.kind !== 'resistor' || !v2 || v2.kind !== 'tube') throw new Error('template without a resistor or V2');
    // a negative resistance is no part (common practice): the processor refuses the edit
    const r = await api('requestIdRun', PT, TT, { ...r1, ohms: -1000 }, { ...v2, type: '12AT7' });
    console.log(JSON.stringify(r));
    expect(r.loadA).toBe(`resolved A ${PT.name}`);
    expect(r.errors.length).toBe(1);
    expect(r.errors[0]!.message).toMatch(/^design rejected/);
    expect(r.errors[0]!.requestId).not.toBeNull();
    // the retype on A (its plan from the worker) answers its request, on its own at 4x or swapped
    // in with the quality change; both slots end at 2x (plans at the new factor), no error
    expect(r.loadedAfter.some((l) => l.slot === 'A' && l.requestId !== null)).toBe(true);
    expect(
      r.loadedAfter
        .slice(-2)
        .map((l) => `${l.slot}@${l.factor}`)
        .sort(),
    ).toEqual(['A@2', 'B@2']);
  });
});
