// `valvewright pair` and src/dsp/render/pair.ts: loudness-matched pairs from one DI.
import { mkdtemp, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { wavefileDecode, type WaveFmt } from './helpers/wavefile.ts';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../src/cli/main.ts';
import { measureLoudness } from '../src/dsp/analysis/loudness.ts';
import { encodeWav } from '../src/dsp/io/wav.ts';
import { designCircuit } from '../src/dsp/circuit/design.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { OversampledCircuit } from '../src/dsp/render/oversampled.ts';
import { AlignedRender, planPairGains, slugify, rateTag, pairFileName, PCM24 } from '../src/dsp/render/pair.ts';
import { fileCalibration, renderRiffVolts, type Riff } from '../src/dsp/synth/riff.ts';
import { SINGLE_COIL_BRIDGE } from '../src/dsp/synth/pickup.ts';

const FS = 48000;

// --- independent decoding: wavefile (npm, general purpose), not the project's WAV reader ---
async function readWav(path: string): Promise<{ samples: Float64Array; fmt: WaveFmt }> {
  const { fmt, samples: raw } = wavefileDecode(new Uint8Array(await readFile(path)), Float64Array);
  const scale = fmt.audioFormat === 3 ? 1 : 2 ** (fmt.bitsPerSample - 1);
  return { samples: Float64Array.from(raw, (x) => x / scale), fmt };
}

// --- independent minimal BS.1770-4 integrated loudness (mono, 48 kHz only) ---
// K-weighting coefficients: ITU-R BS.1770-4, Annex 1, Tables 1 and 2 (confirmed). Gating: 400 ms blocks, 75 % overlap, absolute gate -70 LKFS, relative gate -10 LU,
// L = -0.691 + 10 log10(mean square) (same source). Direct form I, written here from the equations.
function bs1770IntegratedLufs(x: ArrayLike<number>): number {
  const sb = [1.53512485958697, -2.69169618940638, 1.19839281085285],
    sa = [-1.69065929318241, 0.73248077421585];
  const hb = [1, -2, 1],
    ha = [-1.99004745483398, 0.99007225036621];
  const y = new Float64Array(x.length);
  let x1 = 0,
    x2 = 0,
    u1 = 0,
    u2 = 0,
    y1 = 0,
    y2 = 0;
  for (let n = 0; n < x.length; n++) {
    const xn = x[n] ?? 0;
    const u = sb[0]! * xn + sb[1]! * x1 + sb[2]! * x2 - sa[0]! * u1 - sa[1]! * u2;
    const v = hb[0]! * u + hb[1]! * u1 + hb[2]! * u2 - ha[0]! * y1 - ha[1]! * y2;
    x2 = x1;
    x1 = xn;
    u2 = u1;
    u1 = u;
    y2 = y1;
    y1 = v;
    y[n] = v;
  }
  const block = 0.4 * FS,
    hop = 0.1 * FS;
  const z: number[] = [];
  for (let s = 0; s + block <= y.length; s += hop) {
    let e = 0;
    for (let n = s; n < s + block; n++) e += y[n]! * y[n]!;
    z.push(e / block);
  }
  const lk = (p: number) => -0.691 + 10 * Math.log10(p);
  const abs = z.filter((p) => lk(p) > -70);
  const gate = lk(abs.reduce((a, b) => a + b, 0) / abs.length) - 10;
  const rel = abs.filter((p) => lk(p) > gate);
  return lk(rel.reduce((a, b) => a + b, 0) / rel.length);
}

// --- a short DI of our own: plucked strings through a bridge single coil, peak at -12 dBFS ---
// (DI peak level near -12 dBFS: common practice for recorded guitar DI.)
const RIFF: Riff = {
  name: 'pair-test',
  title: 'Pair test',
  description: 'three notes and a fifth, for the pair tests',
  lengthSeconds: 2.5,
  pickup: SINGLE_COIL_BRIDGE,
  seed: 5,
  notes: [
    { midiNote: 45, startSeconds: 0.05, durationSeconds: 0.6, velocity: 0.7 },
    { midiNote: 52, startSeconds: 0.7, durationSeconds: 0.6, velocity: 0.5 },
    { midiNote: 40, startSeconds: 1.35, durationSeconds: 1.1, velocity: 0.9 },
    { midiNote: 47, startSeconds: 1.37, durationSeconds: 1.05, velocity: 0.85 },
  ],
};

let dir = '';
let diPath = '';
let di = new Float32Array(0);
let voltsAtFullScale = 1;

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'vw-pair-'));
  const volts = renderRiffVolts(RIFF, FS);
  const cal = fileCalibration(volts);
  voltsAtFullScale = cal.voltsAtFullScale;
  di = Float32Array.from(volts, (v) => v * cal.gain);
  diPath = join(dir, 'Bench Take 1.wav');
  await writeFile(diPath, encodeWav([di], FS, { bitDepth: 32, float: true }));
});
afterAll(async () => {
  if (dir) await rm(dir, { recursive: true, force: true });
});

async function run(args: string[]): Promise<{ code: number; out: string[]; err: string[] }> {
  const out: string[] = [],
    err: string[] = [];
  const code = await main(['pair', ...args], { out: (l) => out.push(l), err: (l) => err.push(l) });
  return { code, out, err };
}

interface SheetJson {
  commandLine: string;
  input: { file: string; integratedLufs: number };
  matching: { ceilingBound: boolean; note: string; differenceLu: number; commonLufs: number };
  files: { variant: string; file: string; integratedLufs: number; truePeakDbtp: number; loudnessRangeLu: number; gainDb: number }[];
  designs: {
    ref: string;
    name: string;
    components: { id: string; value: string }[];
    operatingPoint: { nodes: Record<string, number>; tubes: Record<string, Record<string, number>> };
    ratingMargins: unknown[];
  }[];
}

const readSheet = async (d: string) => JSON.parse(await readFile(join(d, 'pair-sheet.json'), 'utf8')) as SheetJson;

describe('valvewright pair: A/B', () => {
  const out = () => join(dir, 'ab');
  const A = 'hearthstone-pentode-front.a.48k.24bit.wav';
  const B = 'hearthstone-triode-front.b.48k.24bit.wav';
  let first: Awaited<ReturnType<typeof run>>;

  beforeAll(async () => {
    first = await run([
      '--input',
      diPath,
      '--design',
      'pentode-triode',
      '--design',
      'triode-triode',
      '--out',
      out(),
      '--oversample',
      '2',
      '--input-volts',
      String(voltsAtFullScale),
    ]);
  });

  it('writes names that carry design, variant, rate and bit depth', async () => {
    expect(first.code, first.err.join('\n')).toBe(0);
    for (const f of [A, B, 'pair-sheet.json', 'pair-sheet.md']) expect((await stat(join(out(), f))).isFile()).toBe(true);
    const a = await readWav(join(out(), A));
    // Header read by wavefile (independent decoder): the name's rate and depth are the file's.
    expect(a.fmt.sampleRate).toBe(48000);
    expect(a.fmt.bitsPerSample).toBe(24);
    expect(a.fmt.numChannels).toBe(1);
    expect(a.samples.length).toBe(di.length);
  });

  it('matches within 0.1 LU by an independent BS.1770 meter and the project meter, under -1 dBTP', async () => {
    const a = (await readWav(join(out(), A))).samples;
    const b = (await readWav(join(out(), B))).samples;
    const la = bs1770IntegratedLufs(a),
      lb = bs1770IntegratedLufs(b);
    const ma = measureLoudness([a], FS),
      mb = measureLoudness([b], FS);
    expect(Math.abs(la - lb)).toBeLessThanOrEqual(0.1); // issue 5: matched within 0.1 LU
    expect(Math.abs(ma.integratedLufs - mb.integratedLufs)).toBeLessThanOrEqual(0.1);
    expect(Math.abs(la - ma.integratedLufs)).toBeLessThanOrEqual(0.1); // two meters agree
    // EBU R 128 (2020), maximum true peak -1 dBTP, the default ceiling.
    expect(ma.truePeakDbtp).toBeLessThanOrEqual(-1);
    expect(mb.truePeakDbtp).toBeLessThanOrEqual(-1);
    const sheet = await readSheet(out());
    const fa = sheet.files.find((f) => f.variant === 'a')!;
    expect(fa.file).toBe(A);
    expect(Math.abs(fa.integratedLufs - la)).toBeLessThan(0.05);
    expect(Math.abs(fa.truePeakDbtp - ma.truePeakDbtp)).toBeLessThan(1e-6);
    console.log(
      `A/B: independent ${la.toFixed(4)} / ${lb.toFixed(4)} LUFS, project ${ma.integratedLufs.toFixed(4)} / ${mb.integratedLufs.toFixed(4)}, TP ${ma.truePeakDbtp.toFixed(3)} / ${mb.truePeakDbtp.toFixed(3)} dBTP`,
    );
  });

  it('sheet operating points equal `valvewright op` for the same designs', async () => {
    const sheet = await readSheet(out());
    expect(sheet.designs.map((d) => d.ref)).toEqual(['pentode-triode', 'triode-triode']);
    for (const d of sheet.designs) {
      const lines: string[] = [];
      expect(await main(['op', '--design', d.ref, '--json'], { out: (l) => lines.push(l), err: () => undefined })).toBe(0);
      const op = JSON.parse(lines.join('\n')) as { nodes: Record<string, number>; tubes: Record<string, Record<string, number>> };
      expect(Object.keys(d.operatingPoint.nodes).sort()).toEqual(Object.keys(op.nodes).sort());
      for (const [n, v] of Object.entries(op.nodes)) expect(d.operatingPoint.nodes[n]).toBeCloseTo(v, 6);
      for (const [id, t] of Object.entries(op.tubes)) {
        for (const k of ['plateAmps', 'plateWatts', 'gridAmps', 'screenAmps']) expect(d.operatingPoint.tubes[id]![k]).toBeCloseTo(t[k]!, 9);
      }
      expect(d.ratingMargins.length).toBeGreaterThan(0);
    }
    // Component values formatted the builder's way (220 k plate load in the template: common notation).
    expect(sheet.designs[1]!.components.find((c) => c.id === 'R3')?.value).toMatch(/^\d+(\.\d+)?kΩ$/);
    const md = await readFile(join(out(), 'pair-sheet.md'), 'utf8');
    expect(md).toMatch(/High voltage/);
    expect(md).toContain(A);
    expect(sheet.commandLine).toContain("'");
  });

  it('refuses to overwrite, and writes nothing; --force replaces', async () => {
    const before = await stat(join(out(), A));
    const again = await run(['--input', diPath, '--design', 'pentode-triode', '--design', 'triode-triode', '--out', out(), '--oversample', '2']);
    expect(again.code).toBe(1);
    expect(again.err.join('\n')).toMatch(/would overwrite .*hearthstone-pentode-front\.a\.48k\.24bit\.wav.*--force/);
    expect(again.err).toHaveLength(1);
    expect((await stat(join(out(), A))).mtimeMs).toBe(before.mtimeMs);
    const forced = await run([
      '--input',
      diPath,
      '--design',
      'pentode-triode',
      '--design',
      'triode-triode',
      '--out',
      out(),
      '--oversample',
      '2',
      '--input-volts',
      String(voltsAtFullScale),
      '--force',
    ]);
    expect(forced.code, forced.err.join('\n')).toBe(0);
  });

  it('the streaming path (renders not kept, rendered again) writes the same bytes', async () => {
    const s = join(dir, 'ab-stream');
    const r = await run([
      '--input',
      diPath,
      '--design',
      'pentode-triode',
      '--design',
      'triode-triode',
      '--out',
      s,
      '--oversample',
      '2',
      '--input-volts',
      String(voltsAtFullScale),
      '--max-memory-mb',
      '0',
    ]);
    expect(r.code, r.err.join('\n')).toBe(0);
    expect(r.err.join('\n')).toMatch(/not kept/);
    for (const f of [A, B]) expect(Buffer.compare(await readFile(join(s, f)), await readFile(join(out(), f)))).toBe(0);
  });
});

describe('valvewright pair --dry', () => {
  it('pairs the DI itself with a design, to a target, with the DI scaled only', async () => {
    const d = join(dir, 'dry');
    const r = await run([
      '--input',
      diPath,
      '--dry',
      '--design',
      'single-pentode',
      '--out',
      d,
      '--oversample',
      '2',
      '--input-volts',
      String(voltsAtFullScale),
      '--target-lufs',
      '-24',
    ]);
    expect(r.code, r.err.join('\n')).toBe(0);
    const dryName = 'bench-take-1.dry.48k.24bit.wav';
    const wetName = 'lantern-single-pentode.b.48k.24bit.wav';
    const dry = (await readWav(join(d, dryName))).samples;
    const wet = (await readWav(join(d, wetName))).samples;
    const ld = bs1770IntegratedLufs(dry),
      lw = bs1770IntegratedLufs(wet);
    expect(Math.abs(ld - lw)).toBeLessThanOrEqual(0.1);
    expect(Math.abs(ld + 24)).toBeLessThanOrEqual(0.1); // the target, ceiling not binding here
    const sheet = await readSheet(d);
    expect(sheet.matching.ceilingBound).toBe(false);
    expect(sheet.designs).toHaveLength(1);
    // dry = DI x gain, quantised to 24 bits: within one LSB (2^-23) of the scaled DI.
    const g = 10 ** (sheet.files.find((f) => f.variant === 'dry')!.gainDb / 20);
    let worst = 0;
    for (let n = 0; n < di.length; n++) worst = Math.max(worst, Math.abs(dry[n]! - di[n]! * g));
    expect(worst).toBeLessThanOrEqual(2 ** -23);
    expect(measureLoudness([dry], FS).truePeakDbtp).toBeLessThanOrEqual(-1);
    console.log(`dry/b: independent ${ld.toFixed(4)} / ${lw.toFixed(4)} LUFS`);
  });

  it('lowers both together when the ceiling binds, and says so', async () => {
    const d = join(dir, 'ceiling');
    const r = await run([
      '--input',
      diPath,
      '--dry',
      '--design',
      'pentode-triode',
      '--out',
      d,
      '--oversample',
      '2',
      '--input-volts',
      String(voltsAtFullScale),
      '--target-lufs',
      '-6',
      '--peak-ceiling',
      '-3',
    ]);
    expect(r.code, r.err.join('\n')).toBe(0);
    const sheet = await readSheet(d);
    expect(sheet.matching.ceilingBound).toBe(true);
    expect(sheet.matching.note).toMatch(/lowered by the same/);
    const files = await Promise.all(sheet.files.map(async (f) => (await readWav(join(d, f.file))).samples));
    const L = files.map(bs1770IntegratedLufs);
    expect(Math.abs(L[0]! - L[1]!)).toBeLessThanOrEqual(0.1);
    expect(L[0]!).toBeLessThan(-6.5);
    for (const s of files) expect(measureLoudness([s], FS).truePeakDbtp).toBeLessThanOrEqual(-3);
    console.log(
      `ceiling -3 dBTP: ${L.map((x) => x.toFixed(3)).join(' / ')} LUFS, TP ${files.map((s) => measureLoudness([s], FS).truePeakDbtp.toFixed(3)).join(' / ')}`,
    );
  });

  it('rejects bad combinations with one line', async () => {
    const cases: [string[], RegExp][] = [
      [['--input', diPath, '--dry', '--design', 'a', '--design', 'b', '--out', dir], /exactly one --design/],
      [['--input', diPath, '--design', 'pentode-triode', '--out', dir], /two designs/],
      [['--input', diPath, '--design', 'nope', '--design', 'pentode-triode', '--out', join(dir, 'x')], /unknown template "nope"/],
      [['--design', 'pentode-triode', '--design', 'pentode-triode', '--out', dir], /missing --input/],
      [['--input', diPath, '--dry', '--design', 'pentode-triode', '--out', dir, '--peak-ceiling', '2'], /--peak-ceiling/],
    ];
    for (const [args, re] of cases) {
      const r = await run(args);
      expect(r.code).toBe(1);
      expect(r.err).toHaveLength(1);
      expect(r.err[0]).toMatch(re);
    }
  });
});

// Cross-correlation lag (in samples) of best |correlation| of y against x over -maxLag..maxLag.
function bestLag(x: ArrayLike<number>, y: ArrayLike<number>, maxLag: number, from: number, to: number): number {
  let best = 0,
    bestV = -1;
  for (let lag = -maxLag; lag <= maxLag; lag++) {
    let s = 0;
    for (let n = from; n < to; n++) s += (x[n] ?? 0) * (y[n + lag] ?? 0);
    if (Math.abs(s) > bestV) {
      bestV = Math.abs(s);
      best = lag;
    }
  }
  return best;
}

describe('latency alignment', () => {
  // Small-signal noise (the circuit nearly linear) so the waveform survives for correlation,
  // low-passed (two one-pole sections at 2 kHz) to the guitar band: the live half-band
  // oversampler's group delay is about its DC value there and grows toward 18 kHz
  // (src/dsp/oversampling/oversampler.ts header), which the compensation does not follow.
  const noise = (() => {
    let s = 12345,
      l1 = 0,
      l2 = 0;
    const k = 1 - Math.exp((-2 * Math.PI * 2000) / FS);
    const x = new Float64Array(FS / 2);
    for (let n = 0; n < x.length; n++) {
      s = (s * 1103515245 + 12345) >>> 0;
      l1 += k * ((s / 2 ** 32 - 0.5) * 0.08 - l1);
      l2 += k * (l1 - l2);
      x[n] = l2;
    }
    return x;
  })();

  it('aligned 8x render lines up with the plain 1x circuit (no rate conversion), the raw 8x one does not', () => {
    // Reference: the same circuit run at the base rate has no oversampler, hence no latency.
    const c = designCircuit(TEMPLATES['triode-triode']!);
    // the plain 1x circuit: no rate conversion and no averaging (whose half-sample delay at 1x
    // would make the best lag ambiguous)
    const ref = new OversampledCircuit(c, FS, 1, undefined, { antialiasing: 'off' });
    const raw = new OversampledCircuit(c, FS, 8);
    const al = new AlignedRender(c, FS, 8, 0.05);
    const r1 = new Float64Array(noise.length),
      r8 = new Float64Array(noise.length),
      a8 = new Float64Array(noise.length);
    for (let n = 0; n < noise.length; n++) {
      r1[n] = ref.processSample(noise[n]! * 0.05);
      r8[n] = raw.processSample(noise[n]! * 0.05);
    }
    const w = al.process(noise, noise.length, a8);
    al.flush(a8.subarray(w));
    expect(al.advanceSamples).toBe(Math.round(raw.latencySamples));
    expect(al.advanceSamples).toBeGreaterThan(0);
    expect(bestLag(r1, r8, 20, 2000, 20000)).toBe(al.advanceSamples);
    expect(bestLag(r1, a8, 20, 2000, 20000)).toBe(0);
  });

  it('the dry file lines up with the processed one', async () => {
    const d = join(dir, 'lat');
    const p = join(dir, 'noise.wav');
    await writeFile(p, encodeWav([Float32Array.from(noise)], FS, { bitDepth: 32, float: true }));
    const r = await run(['--input', p, '--dry', '--design', 'triode-triode', '--out', d, '--oversample', '8', '--input-volts', '0.05', '--float']);
    expect(r.code, r.err.join('\n')).toBe(0);
    const dry = (await readWav(join(d, 'noise.dry.48k.32float.wav'))).samples;
    const wet = (await readWav(join(d, 'hearthstone-triode-front.b.48k.32float.wav'))).samples;
    expect(dry.length).toBe(wet.length);
    // Within one sample: the circuit's own (minimum-phase) delay is well under a sample here.
    expect(Math.abs(bestLag(dry, wet, 20, 2000, 20000))).toBeLessThanOrEqual(1);
  });
});

describe('pair.ts pure parts', () => {
  it('plans gains: to the quieter file, or to a target, both lowered by the same amount when the ceiling binds', () => {
    const q = planPairGains([
      { integratedLufs: -14, truePeakDbtp: -6 },
      { integratedLufs: -18, truePeakDbtp: -9 },
    ]);
    expect(q.commonLufs).toBe(-18);
    expect(q.gainsDb).toEqual([-4, 0]);
    expect(q.ceilingBound).toBe(false);
    const t = planPairGains(
      [
        { integratedLufs: -14, truePeakDbtp: -6 },
        { integratedLufs: -18, truePeakDbtp: -2 },
      ],
      { targetLufs: -14, ceilingDbtp: -1 },
    );
    // B at +4 dB would peak at +2 dBTP; the largest common level keeping B at -1 dBTP is -17 LUFS (minus the margin).
    expect(t.ceilingBound).toBe(true);
    expect(t.commonLufs).toBeCloseTo(-17.001, 6);
    expect(t.gainsDb[0] - t.gainsDb[1]).toBeCloseTo(-4, 9); // the 4 dB between them is kept
    expect(() =>
      planPairGains([
        { integratedLufs: -Infinity, truePeakDbtp: -50 },
        { integratedLufs: -20, truePeakDbtp: -5 },
      ]),
    ).toThrow(/silent/);
  });

  it('names files', () => {
    expect(slugify('Hearthstone (pentode front)')).toBe('hearthstone-pentode-front');
    expect(rateTag(44100)).toBe('44.1k');
    expect(pairFileName('Hearthstone (pentode front)', 'a', 48000, PCM24)).toBe('hearthstone-pentode-front.a.48k.24bit.wav');
  });
});
