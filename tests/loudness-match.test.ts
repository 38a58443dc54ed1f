// Live A/B loudness match, measured from the audio the slots make. The check is an independent
// meter written here from the standard's literal values (ITU-R BS.1770-4 Tables 1 and 2, 48 kHz:
// ITU-R BS.1770-4, confirmed): L = -0.691 + 10 log10(mean square of the K-weighted signal).
import { describe, expect, it } from 'vitest';
import { DualSlotEngine } from '../src/dsp/realtime/dual-slot-engine.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { designCircuit, withPart, withVolumeFull, type Design, type Part } from '../src/dsp/circuit/design.ts';
import { estimateOutputVoltsAtFullScale } from '../src/dsp/render/levelling.ts';
import { SlidingLoudness } from '../src/dsp/analysis/loudness-match.ts';
import type { FromProcessor, MeterReport, ToProcessor } from '../src/dsp/realtime/messages.ts';

const FS = 48000;

/** K-weighting from BS.1770-4's literal 48 kHz coefficients, then the ungated mean-square loudness. */
function independentLufs(x: Float32Array | Float64Array): number {
  const pre = { b: [1.53512485958697, -2.69169618940638, 1.19839281085285], a: [1, -1.69065929318241, 0.73248077421585] };
  const rlb = { b: [1, -2, 1], a: [1, -1.99004745483398, 0.99007225036621] };
  const biquad = (f: { b: number[]; a: number[] }, input: Float64Array): Float64Array => {
    const y = new Float64Array(input.length);
    let x1 = 0,
      x2 = 0,
      y1 = 0,
      y2 = 0;
    for (let n = 0; n < input.length; n++) {
      const v = f.b[0]! * input[n]! + f.b[1]! * x1 + f.b[2]! * x2 - f.a[1]! * y1 - f.a[2]! * y2;
      x2 = x1;
      x1 = input[n]!;
      y2 = y1;
      y1 = v;
      y[n] = v;
    }
    return y;
  };
  const k = biquad(rlb, biquad(pre, Float64Array.from(x)));
  let ms = 0;
  for (const v of k) ms += v * v;
  return -0.691 + 10 * Math.log10(ms / k.length);
}

/** A steady DI pattern: plucked notes repeating every 0.5 s at about -12 dBFS (pickup and DI level measurements, common practice "Guitar signals"). */
function di(seconds: number): Float32Array {
  const x = new Float32Array(Math.round(FS * seconds));
  for (let k = 0; k < x.length; k++) {
    const t = k / FS,
      tn = t % 0.5,
      f = [110, 147, 196][Math.floor(t / 0.5) % 3]!;
    x[k] = 0.25 * Math.exp(-5 * tn) * (Math.sin(2 * Math.PI * f * t) + 0.4 * Math.sin(4 * Math.PI * f * t));
  }
  return x;
}

const setVol = (d: Design, position: number): Design => withPart(d, { ...(d.parts.find((p) => p.id === 'VOL') as Part & { kind: 'pot' }), position });

function run(a: Design, b: Design, matchOn: boolean): { outA: Float32Array; outB: Float32Array; meters: MeterReport[] } {
  const scale = estimateOutputVoltsAtFullScale(designCircuit(withVolumeFull(a)), FS, 1);
  const meters: MeterReport[] = [];
  const initial: ToProcessor[] = [
    { type: 'set-input-calibration', voltsAtFullScale: 1 },
    { type: 'load-design', slot: 'A', design: a },
    { type: 'load-design', slot: 'B', design: b },
    // one output scale for both: the level difference is the designs' own
    { type: 'set-output-scale', slot: 'A', voltsAtFullScale: scale },
    { type: 'set-output-scale', slot: 'B', voltsAtFullScale: scale },
    { type: 'set-loudness-match', on: matchOn },
  ];
  const e = new DualSlotEngine({
    sampleRateHz: FS,
    factor: 1,
    meterHz: 10,
    initial,
    post: (m: FromProcessor) => {
      if (m.type === 'meter') meters.push({ ...m });
    },
  });
  const settle = 8,
    listen = 3;
  const x = di(settle + 2 * listen);
  const y = new Float32Array(x.length);
  const at = (s: number) => Math.round(s * FS);
  for (let f = 0; f < x.length; f += 128) {
    if (f === at(settle + listen)) e.handle({ type: 'monitor', target: 'B' });
    e.process(x.subarray(f, f + 128), y.subarray(f, f + 128), Math.min(128, x.length - f));
  }
  // skip 0.1 s after the switch (the 5 ms crossfade)
  return { outA: y.subarray(at(settle), at(settle + listen)), outB: y.subarray(at(settle + listen + 0.5), at(settle + 2 * listen)), meters };
}

describe("live A/B loudness match (measured from the slots' sound)", () => {
  const A = setVol(TEMPLATES['pentode-triode']!, 0.95);
  // the log taper (10 % of the track at half rotation, common practice) puts B about 15 dB down
  const B = setVol(TEMPLATES['pentode-triode']!, 0.56);

  it('unmatched: the offset it shows is what a meter on the output reads, within 1 LU', () => {
    const r = run(A, B, false);
    const diff = independentLufs(r.outB) - independentLufs(r.outA);
    expect(diff).toBeLessThan(-12); // the two designs really are about 15 dB apart
    expect(diff).toBeGreaterThan(-18);
    const shown = r.meters[r.meters.length - 1]!.matchOffsetDb!;
    expect(Math.abs(shown - diff)).toBeLessThan(1);
  });

  it('matched: after settling, the two outputs read the same loudness within 1 LU on an independent meter', () => {
    const r = run(A, B, true);
    const la = independentLufs(r.outA),
      lb = independentLufs(r.outB);
    expect(Math.abs(lb - la)).toBeLessThan(1);
    const last = r.meters[r.meters.length - 1]!;
    expect(last.matchGainDb).toBeGreaterThan(12); // it did lift B by about the offset
    // the output meter the workspace shows reads what the independent meter reads (3 s window)
    expect(Math.abs(last.outputLufs! - lb)).toBeLessThan(1);
  });

  it('the sliding meter agrees with the independent meter on a steady signal (EBU Tech 3341 short-term window)', () => {
    const x = di(4);
    const m = new SlidingLoudness(FS);
    m.push(Float64Array.from(x), 0, x.length);
    expect(m.full).toBe(true);
    expect(Math.abs(m.lufs - independentLufs(x.subarray(x.length - 3 * FS)))).toBeLessThan(0.05);
  });
});
