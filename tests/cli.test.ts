// The command line: render, op, netlist and their errors.
import { mkdtempSync, readFileSync, writeFileSync, existsSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { main } from '../src/cli/main.ts';
import { decodeWav, encodeWav } from '../src/dsp/io/wav.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { designToNetlist } from '../src/dsp/circuit/design.ts';
import { parseNetlist } from '../src/dsp/circuit/netlist.ts';
import { simulateNetlist, solveOperatingPoint } from './reference/mna-reference.ts';

const dir = mkdtempSync(join(tmpdir(), 'vw-cli-'));
const fixture = new URL('./fixtures/netlists/ef86-12ax7-direct-coupled.json', import.meta.url).pathname;

async function run(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  const out: string[] = [],
    err: string[] = [];
  const code = await main(argv, { out: (l) => out.push(l), err: (l) => err.push(l) });
  return { code, out: out.join('\n'), err: err.join('\n') };
}

function tone(fs: number, seconds: number, amp: number, hz = 196): Float32Array {
  const x = new Float32Array(Math.round(fs * seconds));
  for (let k = 0; k < x.length; k++) x[k] = amp * Math.sin((2 * Math.PI * hz * k) / fs) * Math.exp((-3 * k) / fs);
  return x;
}

describe('render', () => {
  it('--raw gives the plain circuit: matches the independent nodal reference within -60 dB', async () => {
    const x = tone(48000, 0.1, 0.8);
    const inPath = join(dir, 'in-raw.wav'),
      outPath = join(dir, 'out-raw.wav');
    writeFileSync(inPath, encodeWav([x], 48000, { bitDepth: 32, float: true }));
    const r = await run('render', '--netlist', fixture, '--input', inPath, '--output', outPath, '--raw');
    expect(r.code, r.err).toBe(0);
    const y = decodeWav(readFileSync(outPath)).channels[0]!;
    const ref = simulateNetlist(JSON.parse(readFileSync(fixture, 'utf8')), Float64Array.from(x), 48000).output;
    let es = 0,
      ee = 0;
    for (let k = 0; k < ref.length; k++) {
      es += (ref[k]! - ref[0]!) ** 2;
      ee += (y[k]! - ref[k]!) ** 2;
    }
    expect(10 * Math.log10(ee / es)).toBeLessThan(-60);
  });

  it('default render: oversampled, levelled, under the -1 dBFS limiter, same length and rate; stereo is mixed with a notice', async () => {
    const x = tone(44100, 0.3, 0.9);
    const inPath = join(dir, 'in-st.wav'),
      outPath = join(dir, 'out-st.wav');
    writeFileSync(inPath, encodeWav([x, x], 44100, { bitDepth: 16 }));
    const r = await run('render', '--design', 'pentode-triode', '--input', inPath, '--output', outPath, '--oversample', '2');
    expect(r.code, r.err).toBe(0);
    expect(r.err).toMatch(/mixing to mono/);
    const w = decodeWav(readFileSync(outPath));
    expect(w.sampleRate).toBe(44100);
    expect(w.channels[0]!.length).toBe(x.length);
    const peak = w.channels[0]!.reduce((m, v) => Math.max(m, Math.abs(v)), 0);
    expect(peak).toBeLessThanOrEqual(Math.pow(10, -1 / 20) + 1e-6);
    expect(peak).toBeGreaterThan(0.05);
  });

  it('24-bit input is read', async () => {
    const x = tone(48000, 0.05, 0.5);
    const inPath = join(dir, 'in24.wav'),
      outPath = join(dir, 'out24.wav');
    writeFileSync(inPath, encodeWav([x], 48000, { bitDepth: 24 }));
    expect((await run('render', '--design', 'single-pentode', '--input', inPath, '--output', outPath, '--oversample', '1')).code).toBe(0);
  });

  const bad: [string, (b: Uint8Array) => Uint8Array, RegExp][] = [
    ['truncated data', (b) => b.slice(0, b.length - 100), /missing|truncat/i],
    ['not a WAV', () => new TextEncoder().encode('hello, this is not audio at all, not even close........'), /RIFF|WAVE/],
    [
      '0 channels',
      (b) => {
        const c = b.slice();
        c[22] = 0;
        c[23] = 0;
        return c;
      },
      /channel/i,
    ],
    [
      'compressed format code',
      (b) => {
        const c = b.slice();
        c[20] = 2;
        c[21] = 0;
        return c;
      },
      /0x0002|ADPCM|format/i,
    ],
  ];
  it.each(bad)('a malformed WAV (%s) gets one clear line, a non-zero exit and no output file', async (name, mangle, msg) => {
    const good = encodeWav([tone(48000, 0.05, 0.5)], 48000, { bitDepth: 16 });
    const inPath = join(dir, `bad-${name.replace(/\W/g, '')}.wav`),
      outPath = join(dir, `bad-out-${name.replace(/\W/g, '')}.wav`);
    writeFileSync(inPath, mangle(good));
    const r = await run('render', '--design', 'pentode-triode', '--input', inPath, '--output', outPath);
    expect(r.code).not.toBe(0);
    expect(r.err).toMatch(msg);
    expect(r.err.split('\n')).toHaveLength(1);
    expect(existsSync(outPath)).toBe(false);
    expect(readdirSync(dir).some((f) => f.includes('partial'))).toBe(false);
  });

  it('refuses to write over its input, unknown templates and bad options', async () => {
    const inPath = join(dir, 'same.wav');
    writeFileSync(inPath, encodeWav([tone(48000, 0.01, 0.5)], 48000, { bitDepth: 16 }));
    const before = readFileSync(inPath);
    let r = await run('render', '--design', 'pentode-triode', '--input', inPath, '--output', inPath);
    expect(r.code).not.toBe(0);
    expect(r.err).toMatch(/same file/);
    expect(readFileSync(inPath).equals(before)).toBe(true);
    r = await run('render', '--design', 'no-such-thing', '--input', inPath, '--output', join(dir, 'x.wav'));
    expect(r.err).toMatch(/unknown template "no-such-thing"/);
    r = await run('render', '--design', 'pentode-triode', '--input', inPath, '--output', join(dir, 'x.wav'), '--oversample', '3');
    expect(r.err).toMatch(/--oversample: must be 1, 2, 4, 8, 16, 32, 64 or 128/);
    r = await run('render', '--design', 'pentode-triode', '--input', inPath, '--output', join(dir, 'x.wav'), '--antialias', 'maybe');
    expect(r.err).toMatch(/--antialias must be on or off/);
    r = await run('render', '--design', 'pentode-triode', '--input', inPath, '--output', join(dir, 'x.wav'), '--raw', '--antialias', 'on');
    expect(r.err).toMatch(/--raw renders the plain circuit/);
  });

  it('--antialias: the default averages the root at 4x, off renders the plain circuit, and they differ', async () => {
    const inPath = join(dir, 'aa-in.wav');
    writeFileSync(inPath, encodeWav([tone(48000, 0.05, 0.9)], 48000, { bitDepth: 24 }));
    const outs: Float32Array[] = [];
    for (const extra of [[], ['--antialias', 'on'], ['--antialias', 'off']]) {
      const outPath = join(dir, `aa-${extra.join('-') || 'default'}.wav`);
      const r = await run('render', '--design', 'pentode-triode', '--input', inPath, '--output', outPath, '--oversample', '4', '--json', ...extra);
      expect(r.code, r.err).toBe(0);
      expect(JSON.parse(r.out).antialias).toBe(extra[1] !== 'off');
      outs.push(decodeWav(readFileSync(outPath)).channels[0]!);
    }
    const diff = (a: Float32Array, b: Float32Array) => a.reduce((m, x, k) => Math.max(m, Math.abs(x - b[k]!)), 0);
    expect(diff(outs[0]!, outs[1]!)).toBe(0);
    expect(diff(outs[0]!, outs[2]!)).toBeGreaterThan(1e-4);
  });
});

describe('invalid designs get a clear error', () => {
  const base = TEMPLATES['pentode-triode']!;
  const cases: [string, unknown, RegExp][] = [
    ['unknown node', { ...base, parts: base.parts.map((p) => (p.id === 'R3' ? { ...p, nodes: ['b1', 'p1x'] } : p)) }, /only one terminal/],
    ['negative value', { ...base, parts: base.parts.map((p) => (p.id === 'R3' ? { ...p, ohms: -470e3 } : p)) }, /must be positive/],
    ['zero value', { ...base, parts: base.parts.map((p) => (p.id === 'C2' ? { ...p, farads: 0 } : p)) }, /must be positive/],
    ['absurd value', { ...base, parts: base.parts.map((p) => (p.id === 'C2' ? { ...p, farads: 50 } : p)) }, /sane range/],
    ['grid with no DC path', { ...base, parts: base.parts.filter((p) => p.id !== 'R2') }, /no DC path/],
    ['unknown tube type', { ...base, parts: base.parts.map((p) => (p.id === 'V2' ? { ...p, type: '12XYZ' } : p)) }, /unknown tube type/],
  ];
  it.each(cases)('%s', async (name, doc, msg) => {
    const path = join(dir, `design-${name.replace(/\W/g, '')}.json`);
    writeFileSync(path, JSON.stringify(doc));
    const r = await run('op', '--design', path, '--json');
    expect(r.code).not.toBe(0);
    expect(r.err).toMatch(msg);
  });
  it('a file that is not JSON', async () => {
    const path = join(dir, 'broken.json');
    writeFileSync(path, '{ "schema": ');
    expect((await run('op', '--design', path)).err).toMatch(/not valid JSON/);
  });
});

describe('op and netlist', () => {
  it('op --json has the documented shape and agrees with the independent reference', async () => {
    const r = await run('op', '--netlist', fixture, '--json');
    expect(r.code).toBe(0);
    const op = JSON.parse(r.out) as { nodes: Record<string, number>; tubes: Record<string, Record<string, number>> };
    const ref = solveOperatingPoint(JSON.parse(readFileSync(fixture, 'utf8')));
    for (const [n, v] of Object.entries(ref.nodes)) expect(Math.abs(op.nodes[n]! - v)).toBeLessThanOrEqual(1e-3 * Math.abs(v) + 1e-6);
    for (const t of Object.values(op.tubes)) expect(Object.keys(t).sort()).toEqual(['gridAmps', 'plateAmps', 'plateWatts', 'screenAmps']);
  });
  it('netlist prints netlist-v1 that parses back to the same circuit', async () => {
    const r = await run('netlist', '--design', 'single-pentode');
    expect(r.code).toBe(0);
    expect(parseNetlist(r.out)).toEqual(parseNetlist(designToNetlist(TEMPLATES['single-pentode']!)));
  });
  it('the installed bin runs (npx valvewright)', () => {
    const p = spawnSync(process.execPath, [new URL('../bin/valvewright.mjs', import.meta.url).pathname, 'op', '--design', 'triode-triode', '--json'], {
      encoding: 'utf8',
    });
    expect(p.status, p.stderr).toBe(0);
    expect(Object.keys(JSON.parse(p.stdout).tubes)).toEqual(['V1', 'V2']);
  });
});
