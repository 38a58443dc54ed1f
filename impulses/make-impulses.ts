// Writes impulses/<variant>.wav (48 kHz, mono, 32-bit float, unit energy) from the cabinet
// model in src/dsp/synth/cabinet.ts. Run: npx tsx impulses/make-impulses.ts
import { writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { CABINET_VARIANTS, cabinetImpulse } from '../src/dsp/synth/cabinet.ts';
import { encodeWav } from '../src/dsp/io/wav.ts';

export const IMPULSE_SAMPLE_RATE_HZ = 48000;

const here = dirname(fileURLToPath(import.meta.url));
for (const variant of CABINET_VARIANTS) {
  const { samples } = cabinetImpulse(variant, IMPULSE_SAMPLE_RATE_HZ);
  // encodeWav stores float samples as they are, so refuse non-finite ones here (the old writer did).
  const bad = samples.findIndex((s) => !Number.isFinite(s));
  if (bad >= 0) throw new Error(`${variant.name}: sample ${bad} is not finite (${String(samples[bad])})`);
  const bytes = encodeWav([Float32Array.from(samples)], IMPULSE_SAMPLE_RATE_HZ, { bitDepth: 32, float: true });
  const file = join(here, `${variant.name}.wav`);
  writeFileSync(file, bytes);
  let peak = 0;
  for (const s of samples) peak = Math.max(peak, Math.abs(s));
  console.log(`${variant.name}.wav  ${samples.length} samples  ${bytes.length} bytes  peak ${(20 * Math.log10(peak)).toFixed(2)} dBFS`);
}
