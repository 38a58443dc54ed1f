// Schematic layout time (src/ui/model/sheet-layout.ts, ELK in this thread) for the templates and
// chains of one to six tube stages: median of several layouts after warm-up. Prints JSON with
// the command. In the workspace ELK runs in its own worker, so this is time off the page's thread.
//   npx tsx bench/layout.bench.ts
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import type { Design } from '../src/dsp/circuit/design.ts';
import { layoutSheet } from '../src/ui/model/sheet-layout.ts';
import { stageChain } from '../tests/helpers/stages.ts';

const REPEATS = 7;
const cases: [string, Design][] = [...Object.entries(TEMPLATES), ...[1, 2, 3, 4, 5, 6].map((n): [string, Design] => [`chain-${n}`, stageChain(n)])];
for (const [, d] of cases) await layoutSheet(d); // warm-up (ELK's first run compiles)
const results: Record<string, { parts: number; medianMs: number; maxMs: number; width: number; height: number }> = {};
for (const [name, d] of cases) {
  const times: number[] = [];
  let size = { width: 0, height: 0 };
  for (let k = 0; k < REPEATS; k++) {
    const t0 = performance.now();
    const l = await layoutSheet(d);
    times.push(performance.now() - t0);
    size = { width: Math.round(l.width), height: Math.round(l.height) };
  }
  times.sort((a, b) => a - b);
  results[name] = { parts: d.parts.length, medianMs: +times[REPEATS >> 1]!.toFixed(1), maxMs: +times[REPEATS - 1]!.toFixed(1), ...size };
}
console.log(JSON.stringify({ command: 'npx tsx bench/layout.bench.ts', node: process.version, repeats: REPEATS, results }, null, 2));
