// 24-bit PCM quantiser used for the demo clips' level bookkeeping (scripts/make-demo-clips.ts,
// tests/synth.test.ts). Files are written by the project's codec, encodeWav in src/dsp/io/wav.ts,
// whose integer path applies the same rule (x * 2^23, round to nearest, clamp), so the codes
// computed here are the codes in the file.

export const PCM24_FULL_SCALE = 8388608; // 2^23

/** Quantises samples * gain to 24-bit integers: scale by 2^23, round to nearest, clamp to [-2^23, 2^23 - 1]. */
export function quantisePcm24(samples: ArrayLike<number>, gain = 1): Int32Array {
  if (!Number.isFinite(gain)) throw new Error(`quantiser gain must be finite (got ${String(gain)})`);
  const out = new Int32Array(samples.length);
  for (let n = 0; n < samples.length; n++) {
    const v = (samples[n] ?? 0) * gain;
    if (!Number.isFinite(v)) throw new Error(`sample ${n} is not finite (${String(v)})`);
    const q = Math.round(v * PCM24_FULL_SCALE);
    out[n] = q > PCM24_FULL_SCALE - 1 ? PCM24_FULL_SCALE - 1 : q < -PCM24_FULL_SCALE ? -PCM24_FULL_SCALE : q;
  }
  return out;
}
