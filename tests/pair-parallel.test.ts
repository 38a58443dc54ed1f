// Pair sides rendered on worker threads (src/cli/pair-renders.ts) against the same render on
// this thread: the threads must not change a sample (a render is a pure function of its inputs).
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { encodeWav } from '../src/dsp/io/wav.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { designCircuit } from '../src/dsp/circuit/design.ts';
import { AlignedRender } from '../src/dsp/render/pair.ts';
import { renderInParallel } from '../src/cli/pair-renders.ts';

const dir = mkdtempSync(join(tmpdir(), 'vw-pair-par-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('pair renders on worker threads', () => {
  it('equal the same renders on the main thread, sample for sample, with progress reported', async () => {
    const fs = 48000,
      n = 60000;
    const left = new Float32Array(n),
      right = new Float32Array(n);
    for (let k = 0; k < n; k++) {
      left[k] = 0.5 * Math.sin((2 * Math.PI * 196 * k) / fs) * Math.exp(-k / 30000);
      right[k] = 0.2 * Math.sin((2 * Math.PI * 330 * k) / fs);
    }
    const path = join(dir, 'di.wav');
    writeFileSync(path, encodeWav([left, right], fs, { bitDepth: 32, float: true }));
    const designs = [TEMPLATES['pentode-triode']!, TEMPLATES['triode-triode']!];
    const progress: number[][] = [[], []];
    const got = await renderInParallel(
      designs.map((design) => ({ inPath: path, design, factor: 2, inputVolts: 1.5 })),
      (j, f) => progress[j]!.push(f),
    );
    for (let j = 0; j < 2; j++) {
      const r = new AlignedRender(designCircuit(designs[j]!), fs, 2, 1.5);
      const mono = Float64Array.from(left, (v, k) => (v + right[k]!) / 2);
      const out = new Float64Array(n + 64);
      let w = r.process(mono, n, out);
      const tail = new Float64Array(64);
      const t = r.flush(tail);
      for (let k = 0; k < t && w < n; k++) out[w++] = tail[k]!;
      expect(got[j]!.samples.length).toBe(n);
      let worst = 0;
      for (let k = 0; k < n; k++) worst = Math.max(worst, Math.abs(got[j]!.samples[k]! - Math.fround(out[k]!)));
      expect(worst).toBe(0);
      expect(progress[j]!.length).toBeGreaterThan(0);
    }
  }, 60000);

  it('a missing input gives a one-line error naming the design', async () => {
    await expect(
      renderInParallel([{ inPath: join(dir, 'absent.wav'), design: TEMPLATES['triode-triode']!, factor: 1, inputVolts: 1 }], () => {}),
    ).rejects.toThrow(/rendering .* failed: /);
  });
});
