// The processed sides of a pair rendered in parallel, one worker thread each
// (node:worker_threads; src/dsp stays free of Node types). Each render is a pure function of the
// DI, the design, the factor and the input calibration, so the result does not depend on the
// threads: tests/pair-parallel.test.ts compares it with the same render on the main thread.
import { Worker } from 'node:worker_threads';
import type { Design } from '../dsp/circuit/design.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';

export interface PairRenderJob {
  readonly inPath: string;
  readonly design: Design;
  readonly factor: OversamplingFactor;
  readonly inputVolts: number;
}

export type PairRenderMessage =
  | { readonly type: 'progress'; readonly frames: number }
  | { readonly type: 'done'; readonly samples: Float32Array; readonly frames: number; readonly nonFiniteSamples: number }
  | { readonly type: 'failed'; readonly message: string };

export interface PairRenderResult {
  readonly samples: Float32Array;
  readonly nonFiniteSamples: number;
}

/** Render every job on its own worker thread; onProgress(job index, frames done) as they go. */
export function renderInParallel(jobs: readonly PairRenderJob[], onProgress: (job: number, frames: number) => void): Promise<PairRenderResult[]> {
  const url = new URL('./pair-render-worker.mjs', import.meta.url);
  return Promise.all(
    jobs.map(
      (job, i) =>
        new Promise<PairRenderResult>((resolve, reject) => {
          const worker = new Worker(url, { workerData: job });
          let settled = false;
          const finish = (f: () => void): void => {
            if (!settled) {
              settled = true;
              f();
              void worker.terminate();
            }
          };
          worker.on('message', (m: PairRenderMessage) => {
            if (m.type === 'progress') onProgress(i, m.frames);
            else if (m.type === 'done') finish(() => resolve({ samples: m.samples.subarray(0, m.frames), nonFiniteSamples: m.nonFiniteSamples }));
            else finish(() => reject(new Error(`rendering ${job.design.name} failed: ${m.message}`)));
          });
          worker.once('error', (e) => finish(() => reject(new Error(`rendering ${job.design.name} failed: ${e.message}`))));
          worker.once('exit', (code) => finish(() => reject(new Error(`the render thread for ${job.design.name} stopped (exit code ${code})`))));
        }),
    ),
  );
}
