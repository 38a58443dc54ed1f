// Writes impulses/<variant>.wav (48 kHz, mono, 32-bit float, unit energy) from the cabinet
// model in src/dsp/synth/cabinet.ts. Run: npx tsx impulses/make-impulses.ts
import { writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { CABINET_VARIANTS, cabinetImpulse } from '../src/dsp/synth/cabinet.ts';
import { encodeWavFloat32 } from '../src/dsp/synth/wav.ts';

export const IMPULSE_SAMPLE_RATE_HZ = 48000;

const here = dirname(fileURLToPath(import.meta.url));
for (const variant of CABINET_VARIANTS) {
  const { samples } = cabinetImpulse(variant, IMPULSE_SAMPLE_RATE_HZ);
  const bytes = encodeWavFloat32(Float32Array.from(samples), IMPULSE_SAMPLE_RATE_HZ);
  const file = join(here, `${variant.name}.wav`);
  writeFileSync(file, bytes);
  let peak = 0;
  for (const s of samples) peak = Math.max(peak, Math.abs(s));
  console.log(`${variant.name}.wav  ${samples.length} samples  ${bytes.length} bytes  peak ${(20 * Math.log10(peak)).toFixed(2)} dBFS`);
}
