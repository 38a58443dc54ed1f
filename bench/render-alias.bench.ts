// Alias level of the shipped command-line render path (`valvewright render --oversample N`:
// rate conversion, output scaling, the -1 dBFS limiter and 24-bit quantisation included), for
// sines near 1 kHz and 2.5 kHz at 48 kHz. Prints JSON with the command that produced it.
// Run: npx tsx bench/render-alias.bench.ts [--design T|FILE | --netlist FILE] [--factors 2,8,128] [--input-volts 1]
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { decodeWav, encodeWav } from '../src/dsp/io/wav.ts';
import { aliasFreeTestFrequency, measureAliasing } from '../src/dsp/analysis/aliasing.ts';

const args = process.argv.slice(2);
const opt = (name: string): string | undefined => {
  const i = args.indexOf(`--${name}`);
  return i >= 0 ? args[i + 1] : undefined;
};
const netlist = opt('netlist');
const design = netlist ? undefined : (opt('design') ?? 'pentode-triode');
const factors = (opt('factors') ?? '1,2,4,8,16,32,64,128').split(',').map(Number);
const inputVolts = Number(opt('input-volts') ?? '1');
const fs = 48000,
  n = 65536,
  settle = 24000,
  fullScale = 0.5;
const dir = mkdtempSync(join(tmpdir(), 'vw-alias-'));
const bin = new URL('../bin/valvewright.mjs', import.meta.url).pathname;
const rows = [];
try {
  for (const target of [1000, 2500]) {
    const f0 = aliasFreeTestFrequency(target, fs, n);
    const x = new Float32Array(settle + n);
    for (let k = 0; k < x.length; k++) x[k] = fullScale * Math.sin((2 * Math.PI * f0 * k) / fs);
    const inPath = join(dir, `sine-${target}.wav`);
    writeFileSync(inPath, encodeWav([x], fs, { bitDepth: 32, float: true }));
    for (const factor of factors) {
      const outPath = join(dir, `out-${target}-${factor}.wav`);
      const circuit = netlist ? ['--netlist', netlist] : ['--design', design!];
      const t0 = performance.now();
      execFileSync(
        process.execPath,
        [bin, 'render', ...circuit, '--input', inPath, '--output', outPath, '--oversample', String(factor), '--input-volts', String(inputVolts / fullScale)],
        { stdio: ['ignore', 'ignore', 'inherit'] },
      );
      const seconds = (performance.now() - t0) / 1000;
      const y = decodeWav(readFileSync(outPath)).channels[0]!.subarray(settle, settle + n);
      const r = measureAliasing(y, fs, f0);
      let peak = 0;
      for (const v of y) peak = Math.max(peak, Math.abs(v));
      rows.push({
        inputHz: Number(f0.toFixed(3)),
        oversample: factor,
        aliasDb: Number(r.aliasDb.toFixed(1)),
        outputPeakDbfs: Number((20 * Math.log10(peak)).toFixed(1)),
        renderSeconds: Number(seconds.toFixed(1)),
        audioSeconds: x.length / fs,
      });
      console.error(JSON.stringify(rows[rows.length - 1]));
    }
  }
} finally {
  rmSync(dir, { recursive: true, force: true });
}
const cmd = `npx tsx bench/render-alias.bench.ts ${netlist ? `--netlist ${netlist}` : `--design ${design}`} --factors ${factors.join(',')} --input-volts ${inputVolts}`;
console.log(JSON.stringify({ command: cmd, inputVoltsPeak: inputVolts, baseRateHz: fs, band: [20, 15000], rows }, null, 2));
