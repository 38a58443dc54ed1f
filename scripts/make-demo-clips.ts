// Writes public/demo/<riff>.wav (48 kHz, mono, 24-bit PCM, peak near -12 dBFS) and
// public/demo/clips.json with each clip's volts-per-full-scale calibration.
// Run: npx tsx scripts/make-demo-clips.ts
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { DEMO_TARGET_PEAK_DBFS, fileCalibration, renderRiffVolts } from '../src/dsp/synth/riff.ts';
import { DEMO_RIFFS } from '../src/dsp/synth/riffs.ts';
import { decodeWav, encodeWav } from '../src/dsp/io/wav.ts';
import { PCM24_FULL_SCALE, quantisePcm24 } from '../src/dsp/synth/wav.ts';

export const DEMO_SAMPLE_RATE_HZ = 48000;

const outDir = join(dirname(fileURLToPath(import.meta.url)), '..', 'public', 'demo');
mkdirSync(outDir, { recursive: true });
const clips = [];
let totalBytes = 0;
for (const riff of DEMO_RIFFS) {
  const volts = renderRiffVolts(riff, DEMO_SAMPLE_RATE_HZ);
  const { voltsAtFullScale, gain } = fileCalibration(volts, DEMO_TARGET_PEAK_DBFS);
  // Codes for the peak report; encodeWav quantises the same products volts * gain (Float64Array,
  // so nothing is rounded on the way) by the same rule, so the report describes the file.
  const q = quantisePcm24(volts, gain);
  let peakCode = 0;
  for (const v of q) peakCode = Math.max(peakCode, Math.abs(v));
  const peakDbfs = 20 * Math.log10(peakCode / PCM24_FULL_SCALE);
  const scaled = Float64Array.from(volts, (v) => v * gain);
  const bytes = encodeWav([scaled], DEMO_SAMPLE_RATE_HZ, { bitDepth: 24 });
  // Guard: the written codes must be the reported ones (24-bit code / 2^23 is exact in float32).
  const written = decodeWav(bytes).channels[0] ?? new Float32Array(0);
  if (written.length !== q.length) throw new Error(`${riff.name}: wrote ${written.length} samples, expected ${q.length}`);
  for (let n = 0; n < q.length; n++) {
    if ((written[n] ?? Number.NaN) * PCM24_FULL_SCALE !== q[n]) {
      throw new Error(`${riff.name}: sample ${n} written as ${(written[n] ?? Number.NaN) * PCM24_FULL_SCALE}, quantiser gave ${String(q[n])}`);
    }
  }
  const file = `${riff.name}.wav`;
  writeFileSync(join(outDir, file), bytes);
  totalBytes += bytes.length;
  clips.push({
    name: riff.name,
    title: riff.title,
    file,
    description: riff.description,
    pickup: riff.pickup.label,
    durationSeconds: riff.lengthSeconds,
    voltsAtFullScale: Number(voltsAtFullScale.toPrecision(6)),
    peakVolts: Number((voltsAtFullScale * 10 ** (peakDbfs / 20)).toPrecision(6)),
    peakDbfs: Number(peakDbfs.toFixed(3)),
  });
  console.log(`${file}  ${bytes.length} bytes  peak ${peakDbfs.toFixed(2)} dBFS  ${(voltsAtFullScale * 1000).toFixed(2)} mV at full scale`);
}
const index = {
  sampleRateHz: DEMO_SAMPLE_RATE_HZ,
  bitsPerSample: 24,
  channels: 1,
  calibration:
    'Synthesized DI (pickup into 1 M). Sample value 1.0 (digital full scale) = voltsAtFullScale volts at the guitar output; volts = sample * voltsAtFullScale.',
  clips,
};
writeFileSync(join(outDir, 'clips.json'), `${JSON.stringify(index, null, 2)}\n`);
console.log(`total ${totalBytes} bytes of WAV`);
