// Fuzzed netlists through the command line (`render --raw --netlist`): seeded members of the
// random netlist family (tests/helpers/random-netlists.ts) with values pushed 10 to 1e15 times
// out of range, parts removed and leads moved (tests/helpers/fuzz-netlists.ts), driven by hard
// transients (a 3 V sine gated on and off abruptly, then a one-sample 2 V step up and down).
// Each must end in one clean error line (after any notes) or a finite output that stays within the circuit's
// rails: no stack trace, no hang, no absurd voltage. The bound on the output: a network of
// resistors, capacitors and tubes (which only draw current from their electrodes to the
// cathode) cannot put a node beyond the sum of its source EMFs and the input (Tellegen's
// theorem / the maximum principle for passive networks, handbook result); twice that plus 1 V
// leaves room for the grid law's constant term ig0 on a grid leak.
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { main } from '../src/cli/main.ts';
import { decodeWav, encodeWav } from '../src/dsp/io/wav.ts';
import { fuzzedNetlist } from './helpers/fuzz-netlists.ts';
import { gatedSine } from './helpers/signals.ts';

const dir = mkdtempSync(join(tmpdir(), 'vw-fuzz-'));
const FS = 48000,
  SEED = 4242;
const x = gatedSine(FS, 0.03, 700, 3, 0.002, 0.011);
for (let k = Math.round(0.015 * FS); k < Math.round(0.025 * FS); k++) x[k] = 2;
const inputPeak = 3;
const inPath = join(dir, 'in.wav');
writeFileSync(inPath, encodeWav([Float32Array.from(x)], FS, { bitDepth: 32, float: true }));

/** Text that only an internal fault would put in a message. */
const INTERNAL = /\n\s+at |TypeError|RangeError|ReferenceError|undefined|null|NaN|is not a function|Cannot read/;

function railsVolts(json: string): number {
  const n = JSON.parse(json) as { elements: { kind: string; volts?: number }[] };
  return n.elements.filter((e) => e.kind === 'dc-source').reduce((s, e) => s + Math.abs(e.volts ?? 0), 0) + inputPeak;
}

describe('fuzzed netlists through render --raw: a clean error or a finite output within the rails', () => {
  const cases = Array.from({ length: 500 }, (_, i) => i);
  const outcomes = { rendered: 0, refused: 0 };
  it.each(cases)(
    'fuzz case %i',
    async (i) => {
      const f = fuzzedNetlist(SEED, i);
      const np = join(dir, `n${i}.json`),
        op = join(dir, `o${i}.wav`);
      writeFileSync(np, f.json);
      const err: string[] = [];
      const code = await main(['render', '--netlist', np, '--input', inPath, '--output', op, '--raw'], { out: () => {}, err: (l) => err.push(l) });
      const text = err.join('\n');
      expect(text, f.label).not.toMatch(INTERNAL);
      if (code !== 0) {
        // notes about what a netlist lacks may come first; then the one error line
        for (const l of err) expect(l, f.label).toMatch(/^(note|valvewright render): /);
        outcomes.refused++;
        expect(
          err.filter((l) => l.startsWith('valvewright render: ')),
          f.label,
        ).toHaveLength(1);
        expect(err[err.length - 1], f.label).toMatch(/^valvewright render: /);
        return;
      }
      outcomes.rendered++;
      const y = decodeWav(readFileSync(op)).channels[0]!;
      expect(y.length).toBe(x.length);
      let peak = 0;
      for (const v of y) {
        expect(Number.isFinite(v), f.label).toBe(true);
        peak = Math.max(peak, Math.abs(v));
      }
      expect(peak, `${f.label}: output peak ${peak} V`).toBeLessThanOrEqual(2 * railsVolts(f.json) + 1);
    },
    20000,
  );

  it('the fuzz both rendered and refused a good share of the cases (it exercised the solver, not only the checks)', () => {
    expect(outcomes.rendered + outcomes.refused).toBe(cases.length);
    expect(outcomes.rendered).toBeGreaterThan(100);
    expect(outcomes.refused).toBeGreaterThan(30);
  });
});

describe('through the real command (a separate process): no stack trace, no hang', () => {
  const bin = new URL('../bin/valvewright.mjs', import.meta.url).pathname;
  it.each([0, 1, 2, 3])(
    'fuzz case %i',
    (i) => {
      const f = fuzzedNetlist(SEED, i);
      const np = join(dir, `p${i}.json`);
      writeFileSync(np, f.json);
      const r = spawnSync(process.execPath, [bin, 'render', '--netlist', np, '--input', inPath, '--output', join(dir, `p${i}.wav`), '--raw'], {
        encoding: 'utf8',
        timeout: 60000,
      });
      expect(r.signal, `${f.label}: killed (hang?)`).toBeNull();
      expect(r.stderr, f.label).not.toMatch(INTERNAL);
      expect(r.stderr, f.label).not.toMatch(/Warning/);
      const lines = r.stderr
        .trim()
        .split('\n')
        .filter((l) => l.length > 0);
      if (r.status !== 0) {
        for (const l of lines) expect(l, f.label).toMatch(/^(note|valvewright render): /);
        expect(
          lines.filter((l) => l.startsWith('valvewright render: ')),
          f.label,
        ).toHaveLength(1);
      }
    },
    70000,
  );
});
