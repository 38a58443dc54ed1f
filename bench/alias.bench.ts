// Alias level, added latency and real-time factor of the render path at each oversampling factor.
// Run: npx tsx bench/alias.bench.ts [--template pentode-triode] [--volts 1]
import { designCircuit } from '../src/dsp/circuit/design.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { BEST_OVERSAMPLING_FACTOR, OversampledCircuit, OVERSAMPLING_FACTORS } from '../src/dsp/render/oversampled.ts';
import { DEFAULT_LIVE_FACTOR } from '../src/dsp/realtime/dual-slot-engine.ts';
import { aliasFreeTestFrequency, measureAliasing } from '../src/dsp/analysis/aliasing.ts';

const args = process.argv.slice(2);
const opt = (name: string, def: string) => {
  const i = args.indexOf(`--${name}`);
  return i >= 0 ? (args[i + 1] ?? def) : def;
};
const template = opt('template', 'pentode-triode');
const volts = Number(opt('volts', '1'));
const fs = 48000,
  n = 65536,
  settle = Math.round(0.5 * fs);
const design = TEMPLATES[template];
if (!design) throw new Error(`unknown template ${template}`);

const rows: { inputHz: number; oversample: number; aliasDb: number; latencyMs: number; realTimeFactor: number }[] = [];
for (const target of [1000, 2500]) {
  const f0 = aliasFreeTestFrequency(target, fs, n);
  for (const factor of OVERSAMPLING_FACTORS) {
    const m = new OversampledCircuit(designCircuit(design), fs, factor);
    const y = new Float64Array(n);
    const t0 = performance.now();
    for (let k = 0; k < settle + n; k++) {
      const out = m.processSample(volts * Math.sin((2 * Math.PI * f0 * k) / fs));
      if (k >= settle) y[k - settle] = out;
    }
    const seconds = (performance.now() - t0) / 1000;
    const r = measureAliasing(y, fs, f0);
    rows.push({
      inputHz: Number(f0.toFixed(3)),
      oversample: factor,
      aliasDb: Number(r.aliasDb.toFixed(1)),
      latencyMs: Number(((m.latencySamples / fs) * 1000).toFixed(3)),
      realTimeFactor: Number(((settle + n) / fs / seconds).toFixed(2)),
    });
    console.error(JSON.stringify(rows[rows.length - 1]));
  }
}
// issue goals: aliases at least 50 dB down at the live default, 70 dB at the best quality, and
// under 1 ms of added latency at the live default
const worst = (factor: number) => Math.max(...rows.filter((r) => r.oversample === factor).map((r) => r.aliasDb));
const live = rows.find((r) => r.oversample === DEFAULT_LIVE_FACTOR);
const goals = {
  liveDefault: {
    factor: DEFAULT_LIVE_FACTOR,
    worstAliasDb: worst(DEFAULT_LIVE_FACTOR),
    goalDb: -50,
    met: worst(DEFAULT_LIVE_FACTOR) <= -50,
    latencyMs: live?.latencyMs ?? null,
    latencyMet: (live?.latencyMs ?? Infinity) < 1,
  },
  best: { factor: BEST_OVERSAMPLING_FACTOR, worstAliasDb: worst(BEST_OVERSAMPLING_FACTOR), goalDb: -70, met: worst(BEST_OVERSAMPLING_FACTOR) <= -70 },
};
console.log(
  JSON.stringify(
    {
      command: `npx tsx bench/alias.bench.ts --template ${template} --volts ${volts}`,
      template,
      inputVoltsPeak: volts,
      baseRateHz: fs,
      band: [20, 15000],
      rows,
      goals,
    },
    null,
    2,
  ),
);
