// Pure WAV (RIFF/WAVE) codec: Uint8Array in and out, no Node or DOM APIs.
// Layout per the Microsoft RIFF/WAVE and WAVE_FORMAT_EXTENSIBLE descriptions (from memory):
// "RIFF" size "WAVE", then chunks (id, u32 LE size, body, pad byte when size is odd).

export type WavSampleFormat = 'pcm' | 'float';

export interface DecodedWav {
  sampleRate: number;
  channels: Float32Array[];
  /** Container bits per sample (8, 16, 24, 32 or 64). */
  bitDepth: number;
  format: WavSampleFormat;
}

/** Everything needed to decode the data chunk in pieces. */
export interface WavHeader {
  sampleRate: number;
  channelCount: number;
  /** Container bits per sample. */
  bitDepth: number;
  /** wValidBitsPerSample for WAVE_FORMAT_EXTENSIBLE, else bitDepth. */
  validBits: number;
  format: WavSampleFormat;
  /** Raw wFormatTag (1, 3 or 0xFFFE). */
  formatCode: number;
  blockAlignBytes: number;
  /** Byte offset of the first sample in the file. */
  dataOffsetBytes: number;
  /** Bytes of whole frames in the data chunk. */
  dataLengthBytes: number;
  frameCount: number;
}

export class WavError extends Error {
  /** Set when parseWavHeader was given a prefix too short to reach the needed chunks. */
  readonly neededByteLength: number | undefined;
  constructor(message: string, neededByteLength?: number) {
    super(message);
    this.name = 'WavError';
    this.neededByteLength = neededByteLength;
  }
}

const WAVE_FORMAT_PCM = 0x0001;
const WAVE_FORMAT_IEEE_FLOAT = 0x0003;
const WAVE_FORMAT_EXTENSIBLE = 0xfffe;
const MIN_SAMPLE_RATE_HZ = 1000;
const MAX_SAMPLE_RATE_HZ = 1_536_000;
const MAX_CHANNELS = 256;

// Registered format codes (Microsoft mmreg.h, from memory) to name what we reject.
const FORMAT_NAMES: Readonly<Record<number, string>> = {
  0x0002: 'Microsoft ADPCM',
  0x0006: 'A-law',
  0x0007: 'mu-law',
  0x0011: 'IMA ADPCM',
  0x0031: 'GSM 6.10',
  0x0050: 'MPEG',
  0x0055: 'MPEG Layer 3',
  0x0092: 'Dolby AC-3 SPDIF',
  0x0161: 'Windows Media Audio',
  0x2000: 'AC-3',
};

// KSDATAFORMAT_SUBTYPE_* GUID tail after the 2-byte format code (from memory).
const SUBFORMAT_TAIL = [0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71];

function hex4(code: number): string {
  return '0x' + code.toString(16).toUpperCase().padStart(4, '0');
}

function formatName(code: number): string {
  const name = FORMAT_NAMES[code];
  return name === undefined ? `format code ${hex4(code)}` : `format code ${hex4(code)} (${name})`;
}

function fourCC(bytes: Uint8Array, offset: number): string {
  let s = '';
  for (let i = 0; i < 4; i++) {
    const c = bytes[offset + i] ?? 0;
    s += c >= 0x20 && c < 0x7f ? String.fromCharCode(c) : '?';
  }
  return s;
}

function u16(bytes: Uint8Array, o: number): number {
  return (bytes[o] ?? 0) | ((bytes[o + 1] ?? 0) << 8);
}

function u32(bytes: Uint8Array, o: number): number {
  return ((bytes[o] ?? 0) | ((bytes[o + 1] ?? 0) << 8) | ((bytes[o + 2] ?? 0) << 16) | ((bytes[o + 3] ?? 0) << 24)) >>> 0;
}

interface FmtInfo {
  formatCode: number;
  format: WavSampleFormat;
  channelCount: number;
  sampleRate: number;
  blockAlign: number;
  bitDepth: number;
  validBits: number;
}

function parseFmt(bytes: Uint8Array, o: number, size: number): FmtInfo {
  if (size < 16) throw new WavError(`fmt chunk is ${size} bytes, expected at least 16`);
  const tag = u16(bytes, o);
  const channelCount = u16(bytes, o + 2);
  const sampleRate = u32(bytes, o + 4);
  const blockAlign = u16(bytes, o + 12);
  const bitDepth = u16(bytes, o + 14);
  let code = tag;
  let validBits = bitDepth;
  if (tag === WAVE_FORMAT_EXTENSIBLE) {
    if (size < 40) throw new WavError(`WAVE_FORMAT_EXTENSIBLE fmt chunk is ${size} bytes, expected 40`);
    const cbSize = u16(bytes, o + 16);
    if (cbSize < 22) throw new WavError(`WAVE_FORMAT_EXTENSIBLE extension size is ${cbSize}, expected 22`);
    validBits = u16(bytes, o + 18);
    code = u16(bytes, o + 24);
    for (let i = 0; i < SUBFORMAT_TAIL.length; i++) {
      if (bytes[o + 26 + i] !== SUBFORMAT_TAIL[i]) {
        throw new WavError('WAVE_FORMAT_EXTENSIBLE sub-format GUID is not a standard KSDATAFORMAT_SUBTYPE');
      }
    }
    if (validBits === 0) validBits = bitDepth;
    if (validBits > bitDepth) {
      throw new WavError(`valid bits per sample ${validBits} exceed the container's ${bitDepth} bits`);
    }
  }
  let format: WavSampleFormat;
  if (code === WAVE_FORMAT_PCM) format = 'pcm';
  else if (code === WAVE_FORMAT_IEEE_FLOAT) format = 'float';
  else {
    const where = tag === WAVE_FORMAT_EXTENSIBLE ? ' in WAVE_FORMAT_EXTENSIBLE' : '';
    throw new WavError(`unsupported ${formatName(code)}${where}: only PCM and IEEE float are supported`);
  }
  if (channelCount === 0) throw new WavError('fmt chunk declares 0 channels');
  if (channelCount > MAX_CHANNELS) throw new WavError(`fmt chunk declares ${channelCount} channels, more than ${MAX_CHANNELS}`);
  if (sampleRate < MIN_SAMPLE_RATE_HZ || sampleRate > MAX_SAMPLE_RATE_HZ) {
    throw new WavError(`sample rate ${sampleRate} Hz is outside ${MIN_SAMPLE_RATE_HZ}..${MAX_SAMPLE_RATE_HZ} Hz`);
  }
  if (format === 'pcm' && bitDepth !== 8 && bitDepth !== 16 && bitDepth !== 24 && bitDepth !== 32) {
    throw new WavError(`unsupported PCM bit depth ${bitDepth} (expected 8, 16, 24 or 32)`);
  }
  if (format === 'float' && bitDepth !== 32 && bitDepth !== 64) {
    throw new WavError(`unsupported float bit depth ${bitDepth} (expected 32 or 64)`);
  }
  const expectedAlign = channelCount * (bitDepth / 8);
  if (blockAlign !== expectedAlign) {
    throw new WavError(`block align ${blockAlign} does not match ${channelCount} channels x ${bitDepth / 8} bytes = ${expectedAlign}`);
  }
  return { formatCode: tag, format, channelCount, sampleRate, blockAlign, bitDepth, validBits };
}

/**
 * Parses and validates the RIFF/WAVE header. `bytes` may be just a prefix of the file when
 * `fileByteLength` gives the real length; the data chunk itself need not be inside the prefix.
 */
export function parseWavHeader(bytes: Uint8Array, fileByteLength: number = bytes.length): WavHeader {
  if (fileByteLength < 12 || bytes.length < 12) throw new WavError(`file is ${fileByteLength} bytes, too short for a WAV header`);
  const riff = fourCC(bytes, 0);
  if (riff === 'RIFX') throw new WavError('big-endian RIFX WAV files are not supported');
  if (riff === 'RF64') throw new WavError('RF64 WAV files are not supported');
  if (riff !== 'RIFF' || fourCC(bytes, 8) !== 'WAVE') {
    throw new WavError(`not a RIFF/WAVE file (starts with "${riff}", form "${fourCC(bytes, 8)}")`);
  }
  let fmt: FmtInfo | undefined;
  let dataOffset = -1;
  let dataSize = 0;
  let o = 12;
  while (o + 8 <= fileByteLength) {
    if (o + 8 > bytes.length) {
      throw new WavError(`header chunks extend past the first ${bytes.length} bytes read`, o + 8);
    }
    const id = fourCC(bytes, o);
    const size = u32(bytes, o + 4);
    const body = o + 8;
    if (id === 'data') {
      if (dataOffset >= 0) throw new WavError('more than one data chunk');
      const available = fileByteLength - body;
      if (size > available) {
        throw new WavError(`truncated file: data chunk declares ${size} bytes but only ${available} follow (${size - available} bytes missing)`);
      }
      dataOffset = body;
      dataSize = size;
      if (fmt !== undefined) break;
    } else {
      if (body + size > fileByteLength) {
        if (fmt !== undefined && dataOffset >= 0) break; // trailing damaged metadata is harmless
        throw new WavError(
          `truncated file: "${id}" chunk at byte ${o} declares ${size} bytes but only ${fileByteLength - body} follow (${body + size - fileByteLength} bytes missing)`,
        );
      }
      if (id === 'fmt ') {
        if (fmt !== undefined) throw new WavError('more than one fmt chunk');
        if (body + size > bytes.length) {
          throw new WavError(`fmt chunk extends past the first ${bytes.length} bytes read`, body + size);
        }
        fmt = parseFmt(bytes, body, size);
        if (dataOffset >= 0) break;
      }
    }
    o = body + size + (size & 1);
  }
  if (fmt === undefined) throw new WavError('missing fmt chunk');
  if (dataOffset < 0) throw new WavError('missing data chunk');
  // A trailing partial frame (size not a multiple of block align) is ignored.
  const frameCount = Math.floor(dataSize / fmt.blockAlign);
  return {
    sampleRate: fmt.sampleRate,
    channelCount: fmt.channelCount,
    bitDepth: fmt.bitDepth,
    validBits: fmt.validBits,
    format: fmt.format,
    formatCode: fmt.formatCode,
    blockAlignBytes: fmt.blockAlign,
    dataOffsetBytes: dataOffset,
    dataLengthBytes: frameCount * fmt.blockAlign,
    frameCount,
  };
}

/**
 * Decodes `frameCount` whole frames from `block` (raw bytes of the data chunk, starting on a
 * frame boundary at `blockOffsetBytes`) into `out[c][outOffset ...]`. Allocates nothing.
 */
export function decodeFrameBlock(
  header: WavHeader,
  block: Uint8Array,
  blockOffsetBytes: number,
  frameCount: number,
  out: readonly Float32Array[],
  outOffset = 0,
): void {
  const nch = header.channelCount;
  const align = header.blockAlignBytes;
  if (out.length < nch) throw new WavError(`decode needs ${nch} output channels, got ${out.length}`);
  if (blockOffsetBytes + frameCount * align > block.length) {
    throw new WavError(`decode of ${frameCount} frames needs ${frameCount * align} bytes, block has ${block.length - blockOffsetBytes}`);
  }
  const view = new DataView(block.buffer, block.byteOffset, block.byteLength);
  const bps = header.bitDepth >> 3;
  for (let c = 0; c < nch; c++) {
    const dst = out[c];
    if (dst === undefined || dst.length < outOffset + frameCount) {
      throw new WavError(`output channel ${c} is shorter than ${outOffset + frameCount} samples`);
    }
    let p = blockOffsetBytes + c * bps;
    const end = outOffset + frameCount;
    if (header.format === 'float') {
      if (header.bitDepth === 32) {
        for (let i = outOffset; i < end; i++, p += align) dst[i] = view.getFloat32(p, true);
      } else {
        for (let i = outOffset; i < end; i++, p += align) dst[i] = view.getFloat64(p, true);
      }
    } else if (header.bitDepth === 16) {
      for (let i = outOffset; i < end; i++, p += align) dst[i] = view.getInt16(p, true) / 32768;
    } else if (header.bitDepth === 24) {
      for (let i = outOffset; i < end; i++, p += align) {
        const v = (((block[p] ?? 0) | ((block[p + 1] ?? 0) << 8) | ((block[p + 2] ?? 0) << 16)) << 8) >> 8;
        dst[i] = v / 8388608;
      }
    } else if (header.bitDepth === 32) {
      for (let i = outOffset; i < end; i++, p += align) dst[i] = view.getInt32(p, true) / 2147483648;
    } else {
      for (let i = outOffset; i < end; i++, p += align) dst[i] = ((block[p] ?? 128) - 128) / 128; // 8-bit is unsigned
    }
  }
}

/** Random-access frame reader over a whole file held in memory. */
export class WavStreamReader {
  readonly header: WavHeader;
  private readonly bytes: Uint8Array;

  constructor(bytes: Uint8Array) {
    this.bytes = bytes;
    this.header = parseWavHeader(bytes);
  }

  /** Decodes frames [startFrame, endFrame) into out[c][0 ...]; returns the frame count read. */
  read(startFrame: number, endFrame: number, out: readonly Float32Array[]): number {
    const h = this.header;
    if (!Number.isInteger(startFrame) || !Number.isInteger(endFrame) || startFrame < 0 || endFrame < startFrame) {
      throw new WavError(`invalid frame range [${startFrame}, ${endFrame})`);
    }
    const end = Math.min(endFrame, h.frameCount);
    const n = Math.max(0, end - startFrame);
    if (n > 0) decodeFrameBlock(h, this.bytes, h.dataOffsetBytes + startFrame * h.blockAlignBytes, n, out, 0);
    return n;
  }
}

export function decodeWav(bytes: Uint8Array): DecodedWav {
  const header = parseWavHeader(bytes);
  const channels: Float32Array[] = [];
  for (let c = 0; c < header.channelCount; c++) channels.push(new Float32Array(header.frameCount));
  decodeFrameBlock(header, bytes, header.dataOffsetBytes, header.frameCount, channels, 0);
  return { sampleRate: header.sampleRate, channels, bitDepth: header.bitDepth, format: header.format };
}

export interface WavEncodeFormat {
  bitDepth: 16 | 24 | 32;
  float?: boolean;
}

function checkEncodeArgs(sampleRate: number, channelCount: number, bitDepth: number, float: boolean): void {
  if (!Number.isInteger(sampleRate) || sampleRate < MIN_SAMPLE_RATE_HZ || sampleRate > MAX_SAMPLE_RATE_HZ) {
    throw new WavError(`cannot write sample rate ${sampleRate} Hz (expected an integer in ${MIN_SAMPLE_RATE_HZ}..${MAX_SAMPLE_RATE_HZ})`);
  }
  if (!Number.isInteger(channelCount) || channelCount < 1 || channelCount > MAX_CHANNELS) {
    throw new WavError(`cannot write ${channelCount} channels (expected 1..${MAX_CHANNELS})`);
  }
  if (float ? bitDepth !== 32 : bitDepth !== 16 && bitDepth !== 24 && bitDepth !== 32) {
    throw new WavError(float ? `float WAV must be 32-bit, got ${bitDepth}` : `cannot write PCM bit depth ${bitDepth}`);
  }
}

/**
 * Header bytes for a WAV whose data chunk (frameCount frames) follows directly. When the data
 * length is odd (24-bit, odd channels x frames) the writer must append one zero pad byte.
 * More than two channels use WAVE_FORMAT_EXTENSIBLE with channel mask 0.
 */
export function wavHeader(sampleRate: number, channels: number, bitDepth: number, float: boolean, frameCount: number): Uint8Array {
  checkEncodeArgs(sampleRate, channels, bitDepth, float);
  if (!Number.isInteger(frameCount) || frameCount < 0) throw new WavError(`invalid frame count ${frameCount}`);
  const blockAlign = channels * (bitDepth / 8);
  const dataBytes = frameCount * blockAlign;
  const extensible = channels > 2;
  const fmtSize = extensible ? 40 : float ? 18 : 16;
  const factSize = float ? 12 : 0; // fact chunk: required for non-PCM formats
  const headerBytes = 12 + 8 + fmtSize + factSize + 8;
  const riffSize = headerBytes - 8 + dataBytes + (dataBytes & 1);
  if (riffSize > 0xffffffff) throw new WavError(`${frameCount} frames exceed the 4 GiB RIFF limit`);
  const h = new Uint8Array(headerBytes);
  const v = new DataView(h.buffer);
  const put4 = (o: number, s: string): void => {
    for (let i = 0; i < 4; i++) h[o + i] = s.charCodeAt(i);
  };
  const code = float ? WAVE_FORMAT_IEEE_FLOAT : WAVE_FORMAT_PCM;
  put4(0, 'RIFF');
  v.setUint32(4, riffSize, true);
  put4(8, 'WAVE');
  put4(12, 'fmt ');
  v.setUint32(16, fmtSize, true);
  v.setUint16(20, extensible ? WAVE_FORMAT_EXTENSIBLE : code, true);
  v.setUint16(22, channels, true);
  v.setUint32(24, sampleRate, true);
  v.setUint32(28, sampleRate * blockAlign, true);
  v.setUint16(32, blockAlign, true);
  v.setUint16(34, bitDepth, true);
  let o = 36;
  if (fmtSize >= 18) {
    v.setUint16(36, extensible ? 22 : 0, true);
    o = 38;
  }
  if (extensible) {
    v.setUint16(38, bitDepth, true);
    v.setUint32(40, 0, true);
    v.setUint16(44, code, true);
    for (let i = 0; i < SUBFORMAT_TAIL.length; i++) h[46 + i] = SUBFORMAT_TAIL[i] ?? 0;
    o = 60;
  }
  if (float) {
    put4(o, 'fact');
    v.setUint32(o + 4, 4, true);
    v.setUint32(o + 8, frameCount, true);
    o += 12;
  }
  put4(o, 'data');
  v.setUint32(o + 4, dataBytes, true);
  return h;
}

/**
 * Interleaves and quantizes frames [startFrame, endFrame) into `out` at `outOffset`.
 * Integer formats: round to nearest, clamp to the code range, NaN -> 0 (x * 2^(n-1), the
 * inverse of the decoder's scaling). Float: values as they are. Allocates nothing.
 */
export function encodeFrameBlock(
  channels: readonly (Float32Array | Float64Array)[],
  startFrame: number,
  endFrame: number,
  format: WavEncodeFormat,
  out: Uint8Array,
  outOffset = 0,
): number {
  const nch = channels.length;
  const bps = format.bitDepth >> 3;
  const align = nch * bps;
  const n = endFrame - startFrame;
  if (outOffset + n * align > out.length) throw new WavError(`encode of ${n} frames needs ${n * align} bytes of output`);
  const view = new DataView(out.buffer, out.byteOffset, out.byteLength);
  for (let c = 0; c < nch; c++) {
    const src = channels[c];
    if (src === undefined || src.length < endFrame) throw new WavError(`channel ${c} is shorter than ${endFrame} samples`);
    let p = outOffset + c * bps;
    if (format.float === true) {
      for (let i = startFrame; i < endFrame; i++, p += align) view.setFloat32(p, src[i] ?? 0, true);
      continue;
    }
    const full = format.bitDepth === 16 ? 32768 : format.bitDepth === 24 ? 8388608 : 2147483648;
    const max = full - 1;
    for (let i = startFrame; i < endFrame; i++, p += align) {
      const x = src[i] ?? 0;
      let q = Math.round(x * full);
      if (!(q >= -full))
        q = x > 0 ? max : x < 0 ? -full : 0; // NaN or -big
      else if (q > max) q = max;
      if (bps === 2) view.setInt16(p, q, true);
      else if (bps === 3) {
        out[p] = q & 0xff;
        out[p + 1] = (q >> 8) & 0xff;
        out[p + 2] = (q >> 16) & 0xff;
      } else view.setInt32(p, q, true);
    }
  }
  return n * align;
}

export function encodeWav(channels: readonly Float32Array[] | readonly Float64Array[], sampleRate: number, format: WavEncodeFormat): Uint8Array {
  const float = format.float === true;
  checkEncodeArgs(sampleRate, channels.length, format.bitDepth, float);
  const frameCount = channels[0]?.length ?? 0;
  for (let c = 1; c < channels.length; c++) {
    if (channels[c]?.length !== frameCount) {
      throw new WavError(`channel ${c} has ${channels[c]?.length} samples, channel 0 has ${frameCount}`);
    }
  }
  const header = wavHeader(sampleRate, channels.length, format.bitDepth, float, frameCount);
  const dataBytes = frameCount * channels.length * (format.bitDepth >> 3);
  const out = new Uint8Array(header.length + dataBytes + (dataBytes & 1));
  out.set(header, 0);
  encodeFrameBlock(channels, 0, frameCount, format, out, header.length);
  return out;
}

/** Average of all channels. */
export function mixToMono(channels: readonly Float32Array[] | readonly Float64Array[]): Float32Array {
  const first = channels[0];
  if (first === undefined) throw new WavError('mixToMono needs at least one channel');
  const n = first.length;
  const out = new Float32Array(n);
  if (channels.length === 1) {
    out.set(first);
    return out;
  }
  const acc = new Float64Array(n);
  for (let c = 0; c < channels.length; c++) {
    const ch = channels[c];
    if (ch === undefined || ch.length !== n) throw new WavError(`channel ${c} has ${ch?.length} samples, channel 0 has ${n}`);
    for (let i = 0; i < n; i++) acc[i] = (acc[i] ?? 0) + (ch[i] ?? 0);
  }
  const k = 1 / channels.length;
  for (let i = 0; i < n; i++) out[i] = (acc[i] ?? 0) * k;
  return out;
}
