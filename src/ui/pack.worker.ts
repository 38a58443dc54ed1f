// Renders the client pack off the main thread: the DI region through A and B (renderAligned),
// matched pairs A/B and dry/B (buildPairPack), WAVs and sheets in one store-only ZIP.
import { designCircuit, validateDesign, type Design } from '../dsp/circuit/design.ts';
import { measureLoudness, type LoudnessReport } from '../dsp/analysis/loudness.ts';
import { buildPairPack, renderAligned, slugify, PAIR_SHEET_JSON, PAIR_SHEET_MD, type PackDesign, type PackSide } from '../dsp/render/pair.ts';
import { encodeWav } from '../dsp/io/wav.ts';
import { buildZip, type ZipEntry } from './model/zip.ts';
import type { PackReply, PackRequest } from './pack-protocol.ts';

const post = (m: PackReply, transfer: Transferable[] = []) =>
  (self as unknown as { postMessage(m: unknown, t: Transferable[]): void }).postMessage(m, transfer);

function build(req: PackRequest): PackReply {
  const { input, sampleRateHz: fs, factor, inputVoltsAtFullScale: volts } = req;
  if (input.length === 0) throw new Error('the region to render is empty');
  // validation registers the designs' fitted tubes in this worker too
  validateDesign(req.designA);
  validateDesign(req.designB);
  const progress = (fraction: number, stage: string) => post({ type: 'progress', id: req.id, fraction, stage });
  const renderOne = (d: Design, slot: string, from: number, to: number) => {
    progress(from, `rendering ${slot}`);
    let last = from;
    const r = renderAligned(designCircuit(d), input, fs, factor, volts, (f) => {
      const x = from + (to - from) * f;
      if (x - last >= 0.01) {
        last = x;
        progress(x, `rendering ${slot}`);
      }
    });
    const op = r.render.model.engine.operatingPoint();
    return { samples: r.samples, render: r.render, design: { design: d, ref: `workspace slot ${slot}`, operatingPoint: op } satisfies PackDesign };
  };
  const a = renderOne(req.designA, 'A', 0, 0.42);
  const b = renderOne(req.designB, 'B', 0.42, 0.84);
  const bad = a.render.nonFiniteSamples + b.render.nonFiniteSamples;
  if (bad > 0) throw new Error(`${bad} samples of the renders were not finite; the design does not simulate cleanly`);
  let di: LoudnessReport | null;
  try {
    di = measureLoudness([input], fs);
  } catch {
    di = null;
  }
  const latency = `processed renders advanced by ${a.render.advanceSamples} samples (oversampler latency ${a.render.latencySamples.toFixed(3)} samples, rounded); the dry file is the DI unshifted; every file has the region's ${input.length} frames`;
  const common = {
    sampleRateHz: fs,
    oversample: factor,
    inputVoltsAtFullScale: volts,
    latencyCompensation: latency,
    input: { file: `${req.clipName} (${req.regionLabel})`, channelCount: 1, loudness: di },
  };
  const sideA: PackSide = { variant: 'a', name: req.designA.name, samples: a.samples };
  const sideB: PackSide = { variant: 'b', name: req.designB.name, samples: b.samples };
  const dry: PackSide = { variant: 'dry', name: req.clipName, samples: input };
  progress(0.86, 'matching A and B');
  const ab = buildPairPack({ ...common, sides: [sideA, sideB], designs: [a.design, b.design] });
  progress(0.93, 'matching dry and B');
  const db = buildPairPack({ ...common, sides: [dry, sideB], designs: [b.design] });
  progress(0.97, 'writing the archive');
  const enc = new TextEncoder();
  const entries: ZipEntry[] = [];
  for (const [dir, pack] of [
    ['a-vs-b', ab],
    ['dry-vs-b', db],
  ] as const) {
    for (const f of pack.files)
      entries.push({ name: `${dir}/${f.name}`, data: encodeWav([f.samples], fs, { bitDepth: f.format.bitDepth, float: f.format.float }) });
    entries.push({ name: `${dir}/${PAIR_SHEET_JSON}`, data: enc.encode(`${pack.sheetJson}\n`) });
    entries.push({ name: `${dir}/${PAIR_SHEET_MD}`, data: enc.encode(pack.sheetMarkdown) });
  }
  const zip = buildZip(entries);
  return { type: 'done', id: req.id, zip, fileName: `${slugify(req.designA.name)}-vs-${slugify(req.designB.name)}.${slugify(req.clipName)}.pack.zip` };
}

self.onmessage = (ev: MessageEvent<PackRequest>) => {
  const req = ev.data;
  try {
    const reply = build(req);
    post(reply, reply.type === 'done' ? [reply.zip.buffer as ArrayBuffer] : []);
  } catch (err) {
    post({ type: 'failed', id: req.id, reason: (err as Error).message });
  }
};
