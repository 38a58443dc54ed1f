// The workspace's analyses, off the main thread: supply estimate (and its hum, heard through the
// circuit), seeded spread with the low / nominal / high tube cases heard, parts list, SPICE
// export and voicing to a target. One request at a time per worker; replies carry the id.
import { designCircuit, designToNetlist, validateDesign, type Design } from '../dsp/circuit/design.ts';
import { BPlusHum, designSupply } from '../dsp/analysis/design-supply.ts';
import { spreadRun, summariseSpread, tubeCaseDesign, type SpreadRun } from '../dsp/analysis/spread.ts';
import { checkDesign } from '../dsp/analysis/check.ts';
import { partsCsv, partsRows } from '../dsp/analysis/parts-list.ts';
import { toSpice } from '../dsp/analysis/spice.ts';
import { identifyToneNetwork, toneNetworkInCircuit } from '../dsp/analysis/ac.ts';
import { CircuitEngine } from '../dsp/circuit/engine.ts';
import { modelDesign } from './model/worst-case.ts';
import { fitToneNetwork } from '../dsp/analysis/voicing.ts';
import { OversampledCircuit } from '../dsp/render/oversampled.ts';
import { estimateOutputVoltsAtFullScale } from '../dsp/render/levelling.ts';
import { PeakLimiter } from '../dsp/render/limiter.ts';
import { encodeWav } from '../dsp/io/wav.ts';
import { designFileName } from './model/design-file.ts';
import type { AnalysisReply, AnalysisRequest, AnalysisResult, ListenClip, SupplyReport } from './analysis-protocol.ts';

const post = (m: AnalysisReply, transfer: Transferable[] = []) =>
  (self as unknown as { postMessage(m: unknown, t: Transferable[]): void }).postMessage(m, transfer);

/** Seconds heard in a listening render (the clip's first seconds; hum alone without a clip). */
const LISTEN_SECONDS = 4;
const LISTEN_FACTOR = 2;
const HUM_ONLY_RATE = 48000;

/**
 * Render a clip (or silence) through a design at 2x, levelled as the workspace levels its own
 * design (the same output scaling for every variant, so levels compare), under a -1 dBFS limiter.
 * `hum` sets the B+ EMF for each sample.
 */
function listen(design: Design, levelFrom: Design, clip: ListenClip | null, hum: BPlusHum | null): { wav: Uint8Array; rmsDbfs: number } {
  const fs = clip?.sampleRateHz ?? HUM_ONLY_RATE;
  const volts = clip?.voltsAtFullScale ?? 0.2;
  const n = Math.min(clip ? clip.samples.length : Infinity, Math.round(LISTEN_SECONDS * fs));
  const model = new OversampledCircuit(designCircuit(design), fs, LISTEN_FACTOR);
  const scale = 1 / estimateOutputVoltsAtFullScale(designCircuit(levelFrom), fs, volts);
  const limiter = new PeakLimiter(fs, -1);
  const out = new Float32Array(n);
  // a 10 Hz DC blocker: an output taken at a plate carries its DC, which is not sound
  const r = 1 - (2 * Math.PI * 10) / fs;
  let x1 = NaN,
    y1 = 0;
  for (let k = 0; k < n; k++) {
    if (hum) model.engine.setSourceVolts(hum.sourceId, hum.next());
    const v = model.processSample(clip ? clip.samples[k]! * volts : 0);
    const x = Number.isFinite(v) ? v : 0;
    if (Number.isNaN(x1)) x1 = x;
    y1 = x - x1 + r * y1;
    x1 = x;
    out[k] = limiter.process(y1 * scale);
  }
  // RMS over the second half (past the first settling)
  let sum = 0;
  for (let k = n >> 1; k < n; k++) sum += out[k]! * out[k]!;
  const rms = Math.sqrt(sum / Math.max(1, n - (n >> 1)));
  // 32-bit float: a well-filtered supply's hum sits below a 16-bit step and should still be measurable
  return { wav: encodeWav([out], fs, { bitDepth: 32, float: true }), rmsDbfs: rms > 0 ? 20 * Math.log10(rms) : -Infinity };
}

function supplyReport(
  design: Design,
  req: Extract<AnalysisRequest, { type: 'supply' | 'supply-hum' }>,
): { report: SupplyReport; hum: BPlusHum; modelDesign: Design; fs: number } {
  const s = designSupply(design, req.section);
  const e = s.estimate;
  const fs = req.type === 'supply-hum' && req.clip ? req.clip.sampleRateHz : HUM_ONLY_RATE;
  return {
    report: {
      unloadedVolts: s.unloadedVolts,
      loadedVolts: s.loadedVolts,
      loadAmps: s.loadAmps,
      ripplePeakToPeakVolts: s.ripplePeakToPeakVolts,
      rippleHertz: s.rippleHertz,
      formulaRippleVolts: e.formulaRippleVolts,
      modelSupply: s.design.supply,
      heater: e.heater ? { totalAmps: e.heater.totalAmps, windingAmps: e.heater.windingAmps, windingVolts: e.heater.windingVolts, pass: e.heater.pass } : null,
      nodes: e.nodes.map((x) => ({ label: x.label, dcVolts: x.dcVolts, ripplePeakToPeakVolts: x.ripplePeakToPeakVolts })),
      warnings: e.warnings,
    },
    hum: new BPlusHum(s, fs),
    modelDesign: s.design,
    fs,
  };
}

function run(req: AnalysisRequest): { result: AnalysisResult; transfer: Transferable[] } {
  // validation registers the design's fitted tubes in this worker too
  validateDesign(req.design, { wiring: false });
  switch (req.type) {
    case 'supply':
      return { result: { type: 'supply', report: supplyReport(req.design, req).report }, transfer: [] };
    case 'supply-hum': {
      const s = supplyReport(req.design, req);
      const { wav, rmsDbfs } = listen(s.modelDesign, req.design, req.clip, s.hum);
      const level = Number.isFinite(rmsDbfs) ? `${rmsDbfs.toFixed(1)} dBFS rms` : 'silent';
      return {
        result: { type: 'audio', wav, label: `${req.clip ? 'the clip' : 'no input'} with the supply's ripple on B+ (${level} at the output)` },
        transfer: [wav.buffer as ArrayBuffer],
      };
    }
    case 'spread': {
      if (!(Number.isInteger(req.runs) && req.runs >= 1 && req.runs <= 2000)) throw new Error(`runs must be a whole number from 1 to 2000 (got ${req.runs})`);
      if (!(Number.isInteger(req.seed) && req.seed >= 0 && req.seed <= 0xffffffff))
        throw new Error(`seed must be a whole number from 0 to 4294967295 (got ${req.seed})`);
      const results: SpreadRun[] = [];
      let last = 0;
      for (let k = 0; k < req.runs; k++) {
        results.push(spreadRun(req.design, req.seed, k));
        const f = (k + 1) / req.runs;
        if (f - last >= 0.02) {
          last = f;
          post({ type: 'progress', id: req.id, fraction: f });
        }
      }
      return { result: { type: 'spread', summary: summariseSpread(req.design, req.seed, results) }, transfer: [] };
    }
    case 'spread-listen': {
      const { wav } = listen(tubeCaseDesign(req.design, req.which), req.design, req.clip, null);
      return { result: { type: 'audio', wav, label: `${req.which} tubes` }, transfer: [wav.buffer as ArrayBuffer] };
    }
    case 'parts': {
      let design = req.design;
      let unloaded: number | undefined;
      if (design.powerSupply) {
        const s = designSupply(design);
        design = s.design;
        unloaded = s.unloadedVolts;
      }
      const r = checkDesign(design, unloaded !== undefined ? { unloadedSupplyVolts: unloaded } : {});
      return {
        result: {
          type: 'text',
          text: partsCsv(partsRows(design, r.ratings, r.findings)),
          fileName: designFileName(req.design).replace(/\.json$/, '.parts.csv'),
          mime: 'text/csv',
        },
        transfer: [],
      };
    }
    case 'spice':
      return {
        result: {
          type: 'text',
          text: toSpice(designToNetlist(req.design), { title: req.design.name }),
          fileName: designFileName(req.design).replace(/\.json$/, '.cir'),
          mime: 'text/plain',
        },
        transfer: [],
      };
    case 'voicing': {
      const circuit = designCircuit(req.design);
      const net = identifyToneNetwork(circuit);
      if (!net) throw new Error('no passive tone network between a plate coupling capacitor and the output to voice');
      // the network as the circuit drives it: from the driving stage's output impedance at its operating point
      const model = modelDesign(req.design);
      const mc = designCircuit(model);
      const sourceOhms = toneNetworkInCircuit(mc, new CircuitEngine(mc, 48000).operatingPoint(), net).sourceOhms;
      // two decades either side of the present values: a target far from the present voicing is reachable
      const r = fitToneNetwork(circuit, net, req.vary, req.target, { series: req.series, sourceOhms, decades: 2 });
      return {
        result: {
          type: 'voicing',
          report: {
            values: r.values,
            cornerHz: r.cornerHz,
            fitError: r.fitError,
            fitErrorUnit: r.fitErrorUnit,
            hertz: r.response.frequenciesHz,
            db: r.response.magnitudeDb,
            sourceOhms,
          },
        },
        transfer: [],
      };
    }
  }
}

self.onmessage = (ev: MessageEvent<AnalysisRequest>) => {
  const req = ev.data;
  try {
    const { result, transfer } = run(req);
    post({ type: 'done', id: req.id, result }, transfer);
  } catch (err) {
    post({ type: 'failed', id: req.id, reason: (err as Error).message });
  }
};
