// WAV codec tests. External references: the registry library wavefile 11.0.0 (writes and
// reads files independently of our code) and the RIFF/WAVE layout (Microsoft, from memory).
import { describe, expect, it } from 'vitest';
import { WaveFile } from './helpers/wavefile.ts';
import {
  decodeFrameBlock,
  decodeWav,
  encodeFrameBlock,
  encodeWav,
  mixToMono,
  parseWavHeader,
  wavHeader,
  WavError,
  WavStreamReader,
} from '../src/dsp/io/wav.ts';

/** Deterministic pseudo-random integers in the code range of a bit depth (LCG, common practice). */
function randomInts(n: number, bits: number, seed: number): number[] {
  const full = 2 ** (bits - 1);
  const out: number[] = [];
  let s = seed >>> 0;
  for (let i = 0; i < n; i++) {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    out.push(Math.floor((s / 2 ** 32) * 2 * full) - full);
  }
  out[0] = -full; // extremes of the code range
  out[1] = full - 1;
  out[2] = 0;
  return out;
}

function wavefileBytes(channels: number[][], sampleRate: number, code: string): Uint8Array {
  const w = new WaveFile();
  w.fromScratch(channels.length, sampleRate, code, channels);
  return w.toBuffer();
}

/** Raw sample values (integers for PCM) that wavefile reads from our bytes. */
function wavefileRead(bytes: Uint8Array): { rate: number; channels: number; bits: string; samples: Float64Array[] } {
  const w = new WaveFile(bytes);
  const fmt = w.fmt as { sampleRate: number; numChannels: number };
  const samples = w.getSamples(false, Float64Array) as unknown as Float64Array[] | Float64Array;
  const list = fmt.numChannels === 1 ? [samples as Float64Array] : (samples as Float64Array[]);
  return { rate: fmt.sampleRate, channels: fmt.numChannels, bits: w.bitDepth, samples: list };
}

function expectWavError(bytes: Uint8Array, pattern: RegExp): void {
  let err: unknown;
  try {
    decodeWav(bytes);
  } catch (e) {
    err = e;
  }
  expect(err).toBeInstanceOf(WavError);
  const msg = (err as Error).message;
  expect(msg).toMatch(pattern);
  expect(msg).not.toContain('\n'); // one clear line
}

/** A minimal valid 16-bit stereo file built by hand, to corrupt field by field. */
function handMade(frames = 4): Uint8Array {
  const ch = [new Float32Array(frames).fill(0.25), new Float32Array(frames).fill(-0.5)];
  return encodeWav(ch, 48000, { bitDepth: 16 });
}

function setU16(b: Uint8Array, o: number, v: number): void {
  b[o] = v & 0xff;
  b[o + 1] = (v >> 8) & 0xff;
}

function setU32(b: Uint8Array, o: number, v: number): void {
  new DataView(b.buffer, b.byteOffset).setUint32(o, v, true);
}

describe('decodeWav against files written by wavefile', () => {
  // wavefile scales nothing when given integer codes; PCM decodes as code / 2^(bits-1).
  for (const bits of [16, 24, 32]) {
    it(`reads ${bits}-bit PCM stereo exactly`, () => {
      const l = randomInts(1000, bits, 1);
      const r = randomInts(1000, bits, 2);
      const d = decodeWav(wavefileBytes([l, r], 44100, String(bits)));
      expect(d.sampleRate).toBe(44100);
      expect(d.bitDepth).toBe(bits);
      expect(d.format).toBe('pcm');
      expect(d.channels.length).toBe(2);
      const full = 2 ** (bits - 1);
      for (let i = 0; i < l.length; i++) {
        // Float32 holds 24 significant bits: exact for 16/24-bit, nearest float for 32-bit.
        expect(d.channels[0]?.[i]).toBe(Math.fround((l[i] ?? 0) / full));
        expect(d.channels[1]?.[i]).toBe(Math.fround((r[i] ?? 0) / full));
      }
    });
  }

  it('reads 8-bit unsigned PCM', () => {
    // wavefile '8' takes unsigned codes 0..255 with 128 as zero (WAVE convention, from memory).
    const codes = [0, 128, 255, 64];
    const d = decodeWav(wavefileBytes([codes], 22050, '8'));
    expect(Array.from(d.channels[0] ?? [])).toEqual(codes.map((c) => (c - 128) / 128));
  });

  it('reads 32-bit and 64-bit float', () => {
    const x = [0.5, -0.25, 1.5, -1e-7, 0];
    const f32 = decodeWav(wavefileBytes([x, x], 48000, '32f'));
    expect(f32.format).toBe('float');
    expect(f32.bitDepth).toBe(32);
    expect(Array.from(f32.channels[1] ?? [])).toEqual(x.map((v) => Math.fround(v)));
    const f64 = decodeWav(wavefileBytes([x], 96000, '64'));
    expect(f64.bitDepth).toBe(64);
    expect(f64.sampleRate).toBe(96000);
    expect(Array.from(f64.channels[0] ?? [])).toEqual(x.map((v) => Math.fround(v)));
  });

  it('reads a 3-channel file with the 40-byte fmt chunk wavefile writes', () => {
    const chans = [randomInts(50, 16, 3), randomInts(50, 16, 4), randomInts(50, 16, 5)];
    const d = decodeWav(wavefileBytes(chans, 48000, '16'));
    expect(d.channels.length).toBe(3);
    expect(d.channels[2]?.[7]).toBe((chans[2]?.[7] ?? 0) / 32768);
  });
});

describe('encodeWav read back by wavefile', () => {
  const x = new Float64Array([0, 1, -1, 0.5, -0.5, 1.7, -3, 0.3 / 32768, 0.6 / 32768, -0.6 / 32768, NaN, 1e-9]);
  it('16-bit: rounds to nearest, clamps, NaN to 0', () => {
    const r = wavefileRead(encodeWav([x], 44100, { bitDepth: 16 }));
    expect(r.rate).toBe(44100);
    expect(r.bits).toBe('16');
    // Expected codes by hand: round(x * 32768) clamped to [-32768, 32767].
    expect(Array.from(r.samples[0] ?? [])).toEqual([0, 32767, -32768, 16384, -16384, 32767, -32768, 0, 1, -1, 0, 0]);
  });

  it('24-bit mono with an odd data length gets a pad byte and reads back', () => {
    const y = new Float32Array([0.25, -0.125, 0.999]);
    const bytes = encodeWav([y], 48000, { bitDepth: 24 });
    expect(bytes.length % 2).toBe(0);
    const r = wavefileRead(bytes);
    // Codes by hand: round(x * 2^23), x as stored in Float32.
    expect(Array.from(r.samples[0] ?? [])).toEqual([2097152, -1048576, Math.round(Math.fround(0.999) * 8388608)]);
  });

  it('32-bit integer and 32-bit float stereo', () => {
    const l = new Float32Array([0.1, -0.7, 1]);
    const r = new Float32Array([-1, 0.3, -0.2]);
    const i32 = wavefileRead(encodeWav([l, r], 96000, { bitDepth: 32 }));
    expect(Array.from(i32.samples[1] ?? [])).toEqual(Array.from(r, (v) => Math.max(-2147483648, Math.min(2147483647, Math.round(v * 2147483648)))));
    const f32 = wavefileRead(encodeWav([l, r], 96000, { bitDepth: 32, float: true }));
    expect(f32.bits).toBe('32f');
    expect(Array.from(f32.samples[0] ?? [])).toEqual(Array.from(l));
  });

  it('WAVE_FORMAT_EXTENSIBLE for 4 channels', () => {
    const chans = [0, 1, 2, 3].map((c) => new Float32Array([c / 4, -c / 8]));
    const bytes = encodeWav(chans, 48000, { bitDepth: 24 });
    expect((bytes[20] ?? 0) | ((bytes[21] ?? 0) << 8)).toBe(0xfffe);
    const r = wavefileRead(bytes);
    expect(r.channels).toBe(4);
    expect(r.samples[3]?.[0]).toBe(Math.round(0.75 * 8388608));
    const d = decodeWav(bytes);
    expect(Array.from(d.channels[3] ?? [])).toEqual([0.75, -0.375]);
  });
});

describe('round trips through our own codec', () => {
  const n = 2000;
  const l = new Float32Array(n);
  const r = new Float32Array(n);
  for (let i = 0; i < n; i++) {
    l[i] = 0.9 * Math.sin(i * 0.01);
    r[i] = 0.5 * Math.cos(i * 0.037);
  }
  for (const bits of [16, 24, 32] as const) {
    it(`${bits}-bit PCM within half an LSB`, () => {
      const d = decodeWav(encodeWav([l, r], 48000, { bitDepth: bits }));
      const lsb = 1 / 2 ** (bits - 1);
      let err = 0;
      for (let i = 0; i < n; i++) err = Math.max(err, Math.abs((d.channels[0]?.[i] ?? 9) - (l[i] ?? 0)), Math.abs((d.channels[1]?.[i] ?? 9) - (r[i] ?? 0)));
      // Half an LSB from rounding, plus float32 resolution for 32-bit.
      expect(err).toBeLessThanOrEqual(lsb / 2 + 6e-8);
    });
  }
  it('32-bit float exactly', () => {
    const d = decodeWav(encodeWav([l, r], 44100, { bitDepth: 32, float: true }));
    expect(d.channels[0]).toEqual(l);
    expect(d.channels[1]).toEqual(r);
  });
  it('Float64 input is accepted', () => {
    const d = decodeWav(encodeWav([Float64Array.from(l)], 44100, { bitDepth: 32, float: true }));
    expect(d.channels[0]).toEqual(l);
  });
});

describe('streaming read and write', () => {
  const frames = 1001;
  const chans = [new Float32Array(frames), new Float32Array(frames)];
  for (let i = 0; i < frames; i++) {
    (chans[0] as Float32Array)[i] = Math.sin(i * 0.1) * 0.8;
    (chans[1] as Float32Array)[i] = ((i % 7) - 3) / 4;
  }
  const bytes = encodeWav(chans, 48000, { bitDepth: 24 });
  const whole = decodeWav(bytes);

  it('WavStreamReader blocks equal the whole-file decode', () => {
    const reader = new WavStreamReader(bytes);
    expect(reader.header.frameCount).toBe(frames);
    const out = [new Float32Array(128), new Float32Array(128)];
    for (let start = 0; start < frames; start += 128) {
      const got = reader.read(start, start + 128, out);
      expect(got).toBe(Math.min(128, frames - start));
      for (let c = 0; c < 2; c++) {
        expect(Array.from(out[c]?.subarray(0, got) ?? [])).toEqual(Array.from(whole.channels[c]?.subarray(start, start + got) ?? []));
      }
    }
  });

  it('parseWavHeader works on a file prefix given the file length', () => {
    const h = parseWavHeader(bytes.subarray(0, 64), bytes.length);
    expect(h.dataOffsetBytes).toBe(44);
    expect(h.frameCount).toBe(frames);
    const block = bytes.subarray(h.dataOffsetBytes + 10 * h.blockAlignBytes, h.dataOffsetBytes + 20 * h.blockAlignBytes);
    const out = [new Float32Array(10), new Float32Array(10)];
    decodeFrameBlock(h, block, 0, 10, out);
    expect(Array.from(out[1] ?? [])).toEqual(Array.from(whole.channels[1]?.subarray(10, 20) ?? []));
  });

  it('wavHeader + encodeFrameBlock in pieces equals encodeWav', () => {
    for (const fmt of [{ bitDepth: 24 as const }, { bitDepth: 32 as const, float: true }]) {
      const expected = encodeWav(chans, 48000, fmt);
      const head = wavHeader(48000, 2, fmt.bitDepth, fmt.float === true, frames);
      const out = new Uint8Array(expected.length);
      out.set(head);
      let o = head.length;
      for (let s = 0; s < frames; s += 300) o += encodeFrameBlock(chans, s, Math.min(frames, s + 300), fmt, out, o);
      expect(out).toEqual(expected);
    }
  });
});

describe('chunk walking', () => {
  it('skips unknown chunks with odd sizes and their pad byte', () => {
    const base = handMade(3);
    // RIFF header, then an odd "junk" chunk (3 bytes + pad), then the original chunks.
    const extra = new Uint8Array([0x6a, 0x75, 0x6e, 0x6b, 3, 0, 0, 0, 1, 2, 3, 0]);
    const b = new Uint8Array(base.length + extra.length);
    b.set(base.subarray(0, 12));
    b.set(extra, 12);
    b.set(base.subarray(12), 12 + extra.length);
    setU32(b, 4, b.length - 8);
    const d = decodeWav(b);
    expect(Array.from(d.channels[1] ?? [])).toEqual([-0.5, -0.5, -0.5]);
    // wavefile agrees on the samples (independent parser).
    expect(Array.from(wavefileRead(b).samples[0] ?? [])).toEqual([8192, 8192, 8192]);
  });
});

describe('malformed files give one clear WavError line', () => {
  it('not RIFF/WAVE', () => {
    const b = handMade();
    b.set([0x4f, 0x67, 0x67, 0x53], 0); // "OggS"
    expectWavError(b, /not a RIFF\/WAVE file.*OggS/);
    const c = handMade();
    c.set([0x41, 0x56, 0x49, 0x20], 8); // "AVI "
    expectWavError(c, /not a RIFF\/WAVE file/);
    expectWavError(new Uint8Array(5), /too short/);
  });

  it('truncated data chunk says how many bytes are missing', () => {
    const b = handMade(100); // 400 data bytes
    expectWavError(b.subarray(0, b.length - 37), /truncated file: data chunk declares 400 bytes but only 363 follow \(37 bytes missing\)/);
  });

  it('missing data chunk', () => {
    const b = handMade();
    b.set([0x64, 0x61, 0x74, 0x78], 36); // "data" -> "datx"
    expectWavError(b, /missing data chunk/);
  });

  it('missing fmt chunk', () => {
    const b = handMade();
    b.set([0x66, 0x6d, 0x74, 0x78], 12);
    expectWavError(b, /missing fmt chunk/);
  });

  it('0 channels', () => {
    const b = handMade();
    setU16(b, 22, 0);
    expectWavError(b, /0 channels/);
  });

  it('compressed format code is named', () => {
    const b = handMade();
    setU16(b, 20, 0x0002);
    expectWavError(b, /unsupported format code 0x0002 \(Microsoft ADPCM\)/);
    setU16(b, 20, 0x1234);
    expectWavError(b, /unsupported format code 0x1234/);
  });

  it('compressed sub-format inside WAVE_FORMAT_EXTENSIBLE is named', () => {
    const b = encodeWav([new Float32Array(2), new Float32Array(2), new Float32Array(2)], 48000, { bitDepth: 16 });
    setU16(b, 44, 0x0055); // sub-format code
    expectWavError(b, /0x0055 \(MPEG Layer 3\) in WAVE_FORMAT_EXTENSIBLE/);
  });

  it('odd bit depth', () => {
    const b = handMade();
    setU16(b, 34, 12);
    setU16(b, 32, 4); // keep block align plausible
    expectWavError(b, /unsupported PCM bit depth 12/);
  });

  it('sample rate 0 or absurd', () => {
    const b = handMade();
    setU32(b, 24, 0);
    expectWavError(b, /sample rate 0 Hz is outside/);
    setU32(b, 24, 50_000_000);
    expectWavError(b, /sample rate 50000000 Hz is outside/);
  });

  it('block align mismatch', () => {
    const b = handMade();
    setU16(b, 32, 6);
    expectWavError(b, /block align 6 does not match 2 channels x 2 bytes = 4/);
  });

  it('encoder rejects bad arguments with a clear message', () => {
    expect(() => encodeWav([new Float32Array(2), new Float32Array(3)], 48000, { bitDepth: 16 })).toThrow(/channel 1 has 3 samples/);
    expect(() => encodeWav([new Float32Array(2)], 0, { bitDepth: 16 })).toThrow(/sample rate 0 Hz/);
    expect(() => encodeWav([new Float32Array(2)], 48000, { bitDepth: 16, float: true })).toThrow(/float WAV must be 32-bit/);
    expect(() => encodeWav([], 48000, { bitDepth: 16 })).toThrow(/0 channels/);
  });
});

describe('mixToMono', () => {
  it('averages the channels', () => {
    const m = mixToMono([new Float32Array([1, 0.5, -1]), new Float32Array([0, 0.5, 1])]);
    expect(Array.from(m)).toEqual([0.5, 0.5, 0]);
    const single = new Float64Array([0.25, -0.75]);
    expect(Array.from(mixToMono([single]))).toEqual([0.25, -0.75]);
    expect(() => mixToMono([])).toThrow(/at least one channel/);
  });
});
