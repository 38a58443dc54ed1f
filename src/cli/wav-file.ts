// WAV files on disk, read and written in blocks (so a long file never sits decoded in memory).
import { open, rename, unlink, type FileHandle } from 'node:fs/promises';
import { decodeFrameBlock, encodeFrameBlock, parseWavHeader, wavHeader, WavError, type WavHeader } from '../dsp/io/wav.ts';
import { CliError } from './args.ts';

const HEADER_PREFIX_BYTES = 64 * 1024;
const MAX_HEADER_BYTES = 64 * 1024 * 1024;

export interface WavFileReader {
  readonly header: WavHeader;
  /** Decode frames [frame, frame + n) into channels[c][0..n). */
  read(frame: number, n: number, channels: readonly Float32Array[]): Promise<void>;
  close(): Promise<void>;
}

export async function openWavFile(path: string): Promise<WavFileReader> {
  let handle: FileHandle;
  try {
    handle = await open(path, 'r');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code ?? '';
    throw new CliError(`cannot open ${path}${code ? ` (${code})` : ''}`);
  }
  try {
    const size = (await handle.stat()).size;
    let prefixLength = Math.min(size, HEADER_PREFIX_BYTES);
    let header: WavHeader | undefined;
    while (header === undefined) {
      const prefix = new Uint8Array(prefixLength);
      await handle.read(prefix, 0, prefixLength, 0);
      try {
        header = parseWavHeader(prefix, size);
      } catch (e) {
        const need = e instanceof WavError ? e.neededByteLength : undefined;
        if (need === undefined || need <= prefixLength || need > MAX_HEADER_BYTES) throw e;
        prefixLength = Math.min(size, Math.max(need, prefixLength * 4));
      }
    }
    const h = header;
    let raw = new Uint8Array(0);
    return {
      header: h,
      async read(frame, n, channels) {
        const bytes = n * h.blockAlignBytes;
        if (raw.length < bytes) raw = new Uint8Array(bytes);
        const { bytesRead } = await handle.read(raw, 0, bytes, h.dataOffsetBytes + frame * h.blockAlignBytes);
        if (bytesRead !== bytes) throw new CliError(`${path} shrank while reading (short read at frame ${frame})`);
        decodeFrameBlock(h, raw, 0, n, channels, 0);
      },
      close: () => handle.close(),
    };
  } catch (e) {
    await handle.close();
    if (e instanceof WavError) throw new CliError(`${path}: ${e.message}`);
    throw e;
  }
}

/** Writes a WAV in blocks to `path.partial-<pid>` and renames it to `path` on finish. */
export class WavFileWriter {
  private constructor(
    private readonly handle: FileHandle,
    private readonly tmpPath: string,
    private readonly finalPath: string,
    private readonly format: { bitDepth: 16 | 24 | 32; float: boolean },
    private readonly channelCount: number,
    private readonly sampleRate: number,
    private frames = 0,
    private buf = new Uint8Array(0),
  ) {}

  static async create(path: string, sampleRate: number, channelCount: number, format: { bitDepth: 16 | 24 | 32; float: boolean }): Promise<WavFileWriter> {
    const tmp = `${path}.partial-${process.pid}`;
    let handle: FileHandle;
    try {
      handle = await open(tmp, 'w');
    } catch (e) {
      throw new CliError(`cannot write ${path} (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
    }
    const w = new WavFileWriter(handle, tmp, path, format, channelCount, sampleRate);
    await handle.write(wavHeader(sampleRate, channelCount, format.bitDepth, format.float, 0), 0, undefined, 0);
    return w;
  }

  get headerBytes(): number {
    return wavHeader(this.sampleRate, this.channelCount, this.format.bitDepth, this.format.float, 0).length;
  }

  async write(channels: readonly (Float32Array | Float64Array)[], n: number): Promise<void> {
    const bytes = n * this.channelCount * (this.format.bitDepth >> 3);
    if (this.buf.length < bytes) this.buf = new Uint8Array(bytes);
    encodeFrameBlock(channels, 0, n, this.format, this.buf, 0);
    const offset = this.headerBytes + this.frames * this.channelCount * (this.format.bitDepth >> 3);
    await this.handle.write(this.buf, 0, bytes, offset);
    this.frames += n;
  }

  async finish(): Promise<void> {
    await this.handle.write(wavHeader(this.sampleRate, this.channelCount, this.format.bitDepth, this.format.float, this.frames), 0, undefined, 0);
    await this.handle.close();
    await rename(this.tmpPath, this.finalPath);
  }

  async abort(): Promise<void> {
    await this.handle.close().catch(() => undefined);
    await unlink(this.tmpPath).catch(() => undefined);
  }
}
