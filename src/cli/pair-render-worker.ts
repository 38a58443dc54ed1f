// One side of a pair rendered on a worker thread (src/cli/pair-renders.ts): reads the DI itself,
// mixes it to mono, renders it aligned (src/dsp/render/pair.ts AlignedRender) and hands the whole
// render back by transfer, with progress messages on the way.
import { parentPort, workerData } from 'node:worker_threads';
import { designCircuit } from '../dsp/circuit/design.ts';
import { AlignedRender } from '../dsp/render/pair.ts';
import { openWavFile } from './wav-file.ts';
import type { PairRenderJob, PairRenderMessage } from './pair-renders.ts';

const BLOCK = 8192;
const PROGRESS_FRAMES = 48000;

async function run(job: PairRenderJob): Promise<void> {
  const post = (m: PairRenderMessage, transfer: ArrayBuffer[] = []): void => parentPort?.postMessage(m, transfer);
  const reader = await openWavFile(job.inPath);
  try {
    const h = reader.header;
    const r = new AlignedRender(designCircuit(job.design), h.sampleRate, job.factor, job.inputVolts);
    const out = new Float32Array(h.frameCount);
    const chans = Array.from({ length: h.channelCount }, () => new Float32Array(BLOCK));
    const mono = new Float64Array(BLOCK),
      tmp = new Float64Array(BLOCK);
    let w = 0,
      lastReport = 0;
    for (let f = 0; f < h.frameCount; f += BLOCK) {
      const n = Math.min(BLOCK, h.frameCount - f);
      await reader.read(f, n, chans);
      for (let k = 0; k < n; k++) {
        let s = 0;
        for (const c of chans) s += c[k]!;
        mono[k] = s / chans.length;
      }
      const got = r.process(mono, n, tmp);
      for (let k = 0; k < got; k++) out[w++] = tmp[k]!;
      if (f + n - lastReport >= PROGRESS_FRAMES) {
        lastReport = f + n;
        post({ type: 'progress', frames: f + n });
      }
    }
    const got = r.flush(tmp);
    for (let k = 0; k < got && w < out.length; k++) out[w++] = tmp[k]!;
    post({ type: 'done', samples: out, frames: w, nonFiniteSamples: r.nonFiniteSamples }, [out.buffer]);
  } finally {
    await reader.close();
  }
}

run(workerData as PairRenderJob).catch((e: unknown) => {
  parentPort?.postMessage({ type: 'failed', message: e instanceof Error ? e.message : String(e) } satisfies PairRenderMessage);
});
