// Minimal RIFF/WAVE writers (mono): 24-bit integer PCM and 32-bit IEEE float.
// Layout per the Microsoft RIFF WAVE format (fmt, fact for non-PCM, data), from memory.

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

function checkRate(sampleRateHz: number): void {
  if (!Number.isInteger(sampleRateHz) || sampleRateHz < 1000 || sampleRateHz > 768000) {
    throw new Error(`WAV sample rate must be an integer from 1000 to 768000 Hz (got ${sampleRateHz})`);
  }
}

function writeAscii(view: DataView, offset: number, text: string): void {
  for (let i = 0; i < text.length; i++) view.setUint8(offset + i, text.charCodeAt(i));
}

/** Mono 24-bit PCM WAV (format code 1). */
export function encodeWavPcm24(quantised: Int32Array, sampleRateHz: number): Uint8Array {
  checkRate(sampleRateHz);
  const dataBytes = quantised.length * 3;
  const pad = dataBytes % 2;
  const bytes = new Uint8Array(44 + dataBytes + pad);
  const v = new DataView(bytes.buffer);
  writeAscii(v, 0, 'RIFF');
  v.setUint32(4, 36 + dataBytes + pad, true);
  writeAscii(v, 8, 'WAVE');
  writeAscii(v, 12, 'fmt ');
  v.setUint32(16, 16, true);
  v.setUint16(20, 1, true);
  v.setUint16(22, 1, true);
  v.setUint32(24, sampleRateHz, true);
  v.setUint32(28, sampleRateHz * 3, true);
  v.setUint16(32, 3, true);
  v.setUint16(34, 24, true);
  writeAscii(v, 36, 'data');
  v.setUint32(40, dataBytes, true);
  let o = 44;
  for (let n = 0; n < quantised.length; n++) {
    const s = (quantised[n] as number) & 0xffffff;
    bytes[o++] = s & 0xff;
    bytes[o++] = (s >> 8) & 0xff;
    bytes[o++] = (s >> 16) & 0xff;
  }
  return bytes;
}

/** Mono 32-bit float WAV (format code 3, with the fact chunk non-PCM formats carry). */
export function encodeWavFloat32(samples: ArrayLike<number>, sampleRateHz: number): Uint8Array {
  checkRate(sampleRateHz);
  const dataBytes = samples.length * 4;
  const bytes = new Uint8Array(58 + dataBytes);
  const v = new DataView(bytes.buffer);
  writeAscii(v, 0, 'RIFF');
  v.setUint32(4, 50 + dataBytes, true);
  writeAscii(v, 8, 'WAVE');
  writeAscii(v, 12, 'fmt ');
  v.setUint32(16, 18, true);
  v.setUint16(20, 3, true);
  v.setUint16(22, 1, true);
  v.setUint32(24, sampleRateHz, true);
  v.setUint32(28, sampleRateHz * 4, true);
  v.setUint16(32, 4, true);
  v.setUint16(34, 32, true);
  v.setUint16(36, 0, true);
  writeAscii(v, 38, 'fact');
  v.setUint32(42, 4, true);
  v.setUint32(46, samples.length, true);
  writeAscii(v, 50, 'data');
  v.setUint32(54, dataBytes, true);
  for (let n = 0; n < samples.length; n++) {
    const s = samples[n] ?? 0;
    if (!Number.isFinite(s)) throw new Error(`sample ${n} is not finite (${String(s)})`);
    v.setFloat32(58 + 4 * n, s, true);
  }
  return bytes;
}
