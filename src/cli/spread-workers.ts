// Spread runs over worker threads (node:worker_threads). Each run is a pure function of
// (design, seed, run index), so the result does not depend on how the runs are split.
import { Worker } from 'node:worker_threads';
import { spreadRun, type SpreadOptions, type SpreadRun } from '../dsp/analysis/spread.ts';
import type { Design } from '../dsp/circuit/design.ts';

export async function spreadRunsParallel(design: Design, runs: number, seed: number, workers: number, options: SpreadOptions = {}): Promise<SpreadRun[]> {
  const w = Math.max(1, Math.min(workers, runs));
  if (w === 1) return Array.from({ length: runs }, (_, k) => spreadRun(design, seed, k, options));
  const chunks: number[][] = Array.from({ length: w }, () => []);
  for (let k = 0; k < runs; k++) chunks[k % w]!.push(k);
  const url = new URL('./spread-worker.mjs', import.meta.url);
  const parts = await Promise.all(
    chunks.map(
      (chunk) =>
        new Promise<SpreadRun[]>((resolve, reject) => {
          const worker = new Worker(url, { workerData: { design, seed, runs: chunk, options } });
          worker.once('message', (m: SpreadRun[]) => {
            resolve(m);
            void worker.terminate();
          });
          worker.once('error', reject);
          worker.once('exit', (code) => {
            if (code !== 0 && code !== 1) reject(new Error(`spread worker exited with code ${code}`));
          });
        }),
    ),
  );
  return parts.flat().sort((a, b) => a.run - b.run);
}
