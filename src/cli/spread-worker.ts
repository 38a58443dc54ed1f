// One spread worker: computes the runs it is given and posts them back.
import { parentPort, workerData } from 'node:worker_threads';
import { spreadRun, type SpreadOptions } from '../dsp/analysis/spread.ts';
import type { Design } from '../dsp/circuit/design.ts';

const job = workerData as { design: Design; seed: number; runs: number[]; options: SpreadOptions };
const results = job.runs.map((k) => spreadRun(job.design, job.seed, k, job.options));
parentPort?.postMessage(results);
