// The audition workspace in headless Chromium: loads clean and fast, edits change the sound,
// A/B switches it back and forth, files import, bad values are refused, designs round-trip.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { openWorkspace, startHarness, type Harness } from './ui-harness.ts';

let h: Harness;
const failedUrls: string[] = [];

type Win = { __valvewright: { port: { renderOffline(s: string, sec: number): Promise<Float32Array | null>; positionSeconds(): number; observeLoad(load: number, nowMs: number): void }; slots(): { A: unknown; B: unknown } } };

/** RMS of the difference of two renders of the same clip (zero when identical). */
async function renderSlot(slot: 'A' | 'B'): Promise<number[]> {
  const out = await h.page.evaluate(async (s) => {
    const r = await (window as unknown as Win).__valvewright.port.renderOffline(s, 0.6);
    return r ? Array.from(r.subarray(4800, 28800)) : [];
  }, slot);
  // a render that came back empty or not finite is a failure of its own, not a NaN comparison
  expect(out.length, `render of ${slot}: ${out.length} samples`).toBeGreaterThan(1000);
  expect(out.every((x) => Number.isFinite(x)), `render of ${slot} is finite`).toBe(true);
  return out;
}
const rmsDiff = (a: number[], b: number[]) => Math.sqrt(a.reduce((acc, x, i) => acc + (x - (b[i] ?? 0)) ** 2, 0) / a.length);
const rms = (a: number[]) => Math.sqrt(a.reduce((acc, x) => acc + x * x, 0) / a.length);

async function editValue(partId: string, text: string): Promise<void> {
  await h.page.locator(`[data-part="${partId}"]`).click();
  const input = h.page.getByTestId('value-input');
  await input.fill(text);
  await input.press('Enter');
}

beforeAll(async () => {
  h = await startHarness();
  h.page.on('response', (r) => { if (r.status() >= 400) failedUrls.push(r.url()); });
}, 120_000);
afterAll(async () => { await h?.close(); });

describe('audition workspace', () => {
  let readyMs = 0;
  it('loads with no console errors and shows the first-run caution', async () => {
    await h.page.goto(h.url);
    await h.page.getByRole('dialog').waitFor();
    await h.page.screenshot({ path: 'docs/screenshots/first-run-caution.png' });
    await openWorkspace(h);
    // second load: Vite has transformed the modules once, as a built page would be
    readyMs = await openWorkspace(h);
    console.log(`page ready (operating point shown) ${readyMs.toFixed(0)} ms after navigation start`);
    const errors = h.consoleErrors.filter((e, i) => !(e.includes('404') && failedUrls.every((u) => u.endsWith('/favicon.ico')) && i >= 0));
    expect(failedUrls.filter((u) => !u.endsWith('/favicon.ico'))).toEqual([]);
    expect(errors).toEqual([]);
    expect(readyMs).toBeLessThan(2000); // issue 3: ready within 2 s on this machine
    await h.page.getByText('V1 · EF86').waitFor();
    await h.page.screenshot({ path: 'docs/screenshots/workspace-1280x800.png' });
  }, 60_000);

  it('an invalid value entry is refused with the reason and the design is unchanged', async () => {
    const before = await h.page.evaluate(() => JSON.stringify((window as unknown as Win).__valvewright.slots()));
    await editValue('R3', '47q');
    const input = h.page.getByTestId('value-input');
    await expect.poll(() => input.getAttribute('aria-invalid')).toBe('true');
    const reason = await h.page.getByRole('alert').first().textContent();
    expect(reason ?? '').toMatch(/47q/);
    await h.page.screenshot({ path: 'docs/screenshots/invalid-value.png' });
    const after = await h.page.evaluate(() => JSON.stringify((window as unknown as Win).__valvewright.slots()));
    expect(after).toBe(before);
  }, 30_000);

  it('editing a resistor changes the rendered output; A/B switching changes it back and forth', async () => {
    await h.page.getByTestId('demo-select').selectOption('boiler-fifths');
    await h.page.getByText(/Boiler Fifths · 5\.0 s/).waitFor();
    await h.page.waitForTimeout(600); // the clip's calibration re-levels both slots after 250 ms
    const a0 = await renderSlot('A');
    expect(rms(a0)).toBeGreaterThan(1e-3);
    await editValue('R3', '150k');
    await expect.poll(() => h.page.evaluate(() => JSON.stringify((window as unknown as Win).__valvewright.slots().A).includes('150000'))).toBe(true);
    await h.page.waitForTimeout(600);
    const a1 = await renderSlot('A');
    expect(rmsDiff(a0, a1)).toBeGreaterThan(0.01 * rms(a0));
    // B still holds the original design: B sounds like the old A, A like the edit, and back
    const b = await renderSlot('B');
    const a2 = await renderSlot('A');
    expect(rmsDiff(b, a0)).toBeLessThan(1e-6 + 1e-3 * rms(a0));
    expect(rmsDiff(a2, a1)).toBeLessThan(1e-6 + 1e-3 * rms(a1));
    expect(rmsDiff(a2, b)).toBeGreaterThan(0.01 * rms(b));
    await h.page.keyboard.press('Escape');
    await h.page.locator('body').click({ position: { x: 5, y: 790 } });
    await h.page.keyboard.press('b');
    await expect.poll(() => h.page.getByRole('radio', { name: 'B' }).getAttribute('aria-checked')).toBe('true');
    await h.page.keyboard.press('a');
    await expect.poll(() => h.page.getByRole('radio', { name: 'A' }).getAttribute('aria-checked')).toBe('true');
  }, 60_000);

  it('the calibration can be set from an interface\'s maximum input level in dBu; a bad level or calibration is refused', async () => {
    const cal = h.page.getByTestId('calibration');
    const before = await cal.inputValue();
    await h.page.getByTestId('dbu').fill('loud');
    await h.page.getByRole('button', { name: 'Use' }).click();
    expect(await h.page.getByRole('alert').first().textContent()).toMatch(/not a level in dBu/);
    expect(await cal.inputValue()).toBe(before);
    // +9 dBu: 0.7746 V rms x 10^(9/20) x sqrt(2) = 3.09 V peak (dBu definition)
    await h.page.getByTestId('dbu').fill('+9');
    await h.page.getByRole('button', { name: 'Use' }).click();
    await expect.poll(() => cal.inputValue()).toMatch(/^3\.0(9|87)/);
    expect(await h.page.getByTestId('message').textContent()).toMatch(/\+9 dBu/);
    // an absurd calibration is refused with the reason and the last good one stays
    await cal.fill('500');
    await cal.press('Enter');
    expect(await h.page.getByRole('alert').first().textContent()).toMatch(/between 1 mV and 50 V/);
    await cal.fill('0');
    await cal.press('Enter');
    expect(await h.page.getByRole('alert').first().textContent()).toMatch(/zero/);
    await cal.fill(before);
    await cal.press('Enter');
    await expect.poll(() => cal.inputValue()).toBe(before);
  }, 30_000);

  it('a sustained processor overload lowers the live quality one step, says so, and the choice can be undone', async () => {
    const quality = h.page.getByRole('combobox', { name: 'Quality' });
    expect(await quality.inputValue()).toBe('4');
    // 1.5 s of reports at 95 % load (the processor's report rate, 30 Hz), fed to the port's guard
    await h.page.evaluate(() => {
      const port = (window as unknown as Win).__valvewright.port;
      for (let k = 0; k <= 45; k++) port.observeLoad(0.95, 1e6 + (k * 1000) / 30);
    });
    await expect.poll(() => quality.inputValue()).toBe('2');
    const note = await h.page.getByTestId('message').textContent();
    expect(note ?? '').toMatch(/95 %.*4×.*2×/);
    // the user goes back up: the guard starts afresh (a short spike does nothing)
    await quality.selectOption('4');
    await h.page.evaluate(() => {
      const port = (window as unknown as Win).__valvewright.port;
      for (let k = 0; k < 10; k++) port.observeLoad(0.95, 2e6 + (k * 1000) / 30);
    });
    await h.page.waitForTimeout(200);
    expect(await quality.inputValue()).toBe('4');
    // with the guard off, a long overload changes nothing
    await h.page.getByLabel('lower quality on overload').uncheck();
    await h.page.evaluate(() => {
      const port = (window as unknown as Win).__valvewright.port;
      for (let k = 0; k <= 90; k++) port.observeLoad(0.99, 3e6 + (k * 1000) / 30);
    });
    await h.page.waitForTimeout(200);
    expect(await quality.inputValue()).toBe('4');
    await h.page.getByLabel('lower quality on overload').check();
    await h.page.getByRole('button', { name: 'Dismiss message' }).click();
  }, 30_000);

  it('a user audio file imports and plays', async () => {
    await h.page.getByTestId('audio-file').setInputFiles({ name: 'my-di.wav', mimeType: 'audio/wav', buffer: readFileSync('public/demo/slate-steps.wav') });
    await h.page.getByText(/my-di\.wav · 5\.0 s/).waitFor();
    await h.page.getByTestId('play').click();
    await expect.poll(() => h.page.evaluate(() => (window as unknown as Win).__valvewright.port.positionSeconds()), { timeout: 15_000 }).toBeGreaterThan(0.3);
    await h.page.waitForTimeout(700);
    await h.page.screenshot({ path: 'docs/screenshots/playing.png', fullPage: true });
    await h.page.getByTestId('play').click();
  }, 60_000);

  it('a source at full scale lights the input mark (the interface or file is clipping); a quiet one does not', async () => {
    if ((await h.page.getByTestId('play').textContent()) === 'Stop') await h.page.getByTestId('play').click(); // the last test's clip
    expect(await h.page.getByTestId('input-clip').isHidden()).toBe(true);
    // 2 s of a 110 Hz sine clipped flat at full scale, 16-bit PCM
    const rate = 48000, n = 2 * rate, b = Buffer.alloc(44 + 2 * n);
    b.write('RIFF', 0); b.writeUInt32LE(36 + 2 * n, 4); b.write('WAVE', 8); b.write('fmt ', 12); b.writeUInt32LE(16, 16);
    b.writeUInt16LE(1, 20); b.writeUInt16LE(1, 22); b.writeUInt32LE(rate, 24); b.writeUInt32LE(2 * rate, 28); b.writeUInt16LE(2, 32); b.writeUInt16LE(16, 34);
    b.write('data', 36); b.writeUInt32LE(2 * n, 40);
    for (let k = 0; k < n; k++) b.writeInt16LE(Math.round(32767 * Math.max(-1, Math.min(1, 1.5 * Math.sin((2 * Math.PI * 110 * k) / rate)))), 44 + 2 * k);
    await h.page.getByTestId('audio-file').setInputFiles({ name: 'hot-di.wav', mimeType: 'audio/wav', buffer: b });
    await h.page.getByText(/hot-di\.wav · 2\.0 s/).waitFor();
    await expect.poll(() => h.page.getByTestId('play').textContent()).toBe('Play');
    await h.page.getByTestId('play').click();
    await expect.poll(() => h.page.getByTestId('input-clip').isVisible(), { timeout: 10_000 }).toBe(true);
    await h.page.getByTestId('play').click();
  }, 30_000);

  it('an exported design re-imports identically; a bad file is refused and changes nothing', async () => {
    const download = h.page.waitForEvent('download');
    await h.page.getByRole('button', { name: 'Export JSON' }).click();
    const file = await (await download).path();
    const exported = readFileSync(file, 'utf8');
    const atExport = await h.page.evaluate(() => JSON.stringify((window as unknown as Win).__valvewright.slots().A));
    expect(JSON.parse(exported)).toEqual(JSON.parse(atExport));
    await editValue('R2', '10M');
    await expect.poll(() => h.page.evaluate(() => JSON.stringify((window as unknown as Win).__valvewright.slots().A))).not.toBe(atExport);
    await h.page.getByTestId('import-design').setInputFiles({ name: 'back.json', mimeType: 'application/json', buffer: Buffer.from(exported) });
    await expect.poll(() => h.page.evaluate(() => JSON.stringify((window as unknown as Win).__valvewright.slots().A))).toBe(atExport);
    await h.page.getByTestId('import-design').setInputFiles({ name: 'broken.json', mimeType: 'application/json', buffer: Buffer.from('{"schema":"valvewright.design.v1"') });
    await h.page.getByText(/broken\.json is not valid JSON/).waitFor();
    await h.page.screenshot({ path: 'docs/screenshots/bad-import.png' });
    expect(await h.page.evaluate(() => JSON.stringify((window as unknown as Win).__valvewright.slots().A))).toBe(atExport);
  }, 60_000);

  it('live input shows its caution first, starts muted, and M mutes it', async () => {
    await h.page.getByRole('button', { name: 'Live input…' }).click();
    await h.page.getByRole('dialog').waitFor();
    await h.page.screenshot({ path: 'docs/screenshots/live-caution.png' });
    await h.page.getByRole('button', { name: /enable input \(muted\)/ }).click();
    await h.page.getByTestId('mute').waitFor();
    expect(await h.page.getByTestId('mute').textContent()).toBe('Unmute');
    // the live path's delay is shown by part (the fake device's figures; a real one differs)
    expect(await h.page.getByTestId('latency').textContent()).toMatch(/delay about \d+ ms \(input [\d.]+, circuit 0\.\d\d, output [\d.]+\)/);
    await h.page.getByTestId('mute').click();
    await expect.poll(() => h.page.getByTestId('mute').textContent()).toBe('Mute (M)');
    await h.page.keyboard.press('m');
    await expect.poll(() => h.page.getByTestId('mute').textContent()).toBe('Unmute');
    // choosing an input channel restarts the input, muted again, and says so
    await h.page.getByTestId('mute').click();
    await expect.poll(() => h.page.getByTestId('mute').textContent()).toBe('Mute (M)');
    await h.page.getByRole('combobox', { name: 'Channel' }).selectOption('1');
    await expect.poll(() => h.page.getByTestId('mute').textContent()).toBe('Unmute');
    expect(await h.page.getByTestId('message').textContent()).toMatch(/restarted.*muted/);
    // a take of the live input becomes the clip
    await h.page.getByTestId('take').click();
    await expect.poll(() => h.page.getByTestId('take').textContent()).toMatch(/Stop take \(0\.[5-9]|Stop take \(1\./);
    await h.page.getByTestId('take').click();
    await expect.poll(() => h.page.getByTestId('message').textContent()).toMatch(/Recorded live take 1 .*it is now the clip/);
    await h.page.getByText(/live take 1 \(\d\d:\d\d\) · \d\.\d s/).waitFor();
    expect(await h.page.getByTestId('take').textContent()).toBe('Record take');
  }, 60_000);

  it('is usable on a narrow laptop screen', async () => {
    await h.page.setViewportSize({ width: 1024, height: 640 });
    await h.page.screenshot({ path: 'docs/screenshots/narrow-1024x640.png' });
    const overflow = await h.page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
    expect(overflow).toBeLessThanOrEqual(0);
  }, 30_000);
});
