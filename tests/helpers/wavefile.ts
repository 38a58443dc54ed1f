// The registry library wavefile (npm, general purpose) as an independent WAV reader and writer
// for tests. In plain Node ESM its named export is missing, so take it from the namespace or
// its default export, whichever the loader gives (wavefile 11).
import * as ns from 'wavefile';

type WaveFileClass = typeof ns.WaveFile;
const mod = ns as unknown as { WaveFile?: WaveFileClass; default?: { WaveFile: WaveFileClass } };
export const WaveFile = (mod.WaveFile ?? mod.default?.WaveFile) as WaveFileClass;

/** The header fields tests read from a wavefile decode. */
export interface WaveFmt {
  sampleRate: number;
  bitsPerSample: number;
  numChannels: number;
  audioFormat: number;
}

/** Decodes bytes with wavefile: its header fields and its raw sample values (integer codes for PCM). */
export function wavefileDecode<T extends Float64Array | Int32Array>(bytes: Uint8Array, type: new (n: number) => T): { fmt: WaveFmt; samples: T } {
  const w = new WaveFile(bytes);
  return { fmt: w.fmt as WaveFmt, samples: w.getSamples(false, type as unknown as Float64ArrayConstructor) as unknown as T };
}
