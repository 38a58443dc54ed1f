// AudioBuffers from samples, files and other rates (one path for each: the player, the cabinet
// and offline renders all use these).

/** Rates an AudioBuffer accepts in every browser we support. */
function checkRate(rateHz: number): void {
  if (!(rateHz >= 3000 && rateHz <= 768000)) throw new Error(`sample rate ${rateHz} Hz is outside 3000..768000 Hz`);
}

/** A mono AudioBuffer holding a copy of `samples` at `rateHz`. */
export function bufferFrom(samples: Float32Array, rateHz: number): AudioBuffer {
  checkRate(rateHz);
  const b = new AudioBuffer({ length: Math.max(1, samples.length), sampleRate: rateHz, numberOfChannels: 1 });
  b.copyToChannel(Float32Array.from(samples), 0);
  return b;
}

/** `b` at `rateHz` (every channel, resampled by an offline render; `b` itself when the rates agree). */
export async function resampleBuffer(b: AudioBuffer, rateHz: number): Promise<AudioBuffer> {
  if (b.sampleRate === rateHz) return b;
  checkRate(rateHz);
  const len = Math.max(1, Math.round((b.length * rateHz) / b.sampleRate));
  const off = new OfflineAudioContext(b.numberOfChannels, len, rateHz);
  const node = new AudioBufferSourceNode(off, { buffer: b });
  node.connect(off.destination);
  node.start(0);
  return off.startRendering();
}

/** Build an AudioBuffer at `rateHz` from mono samples at `fromHz` (resampled by an offline render if the rates differ). */
export function monoBuffer(samples: Float32Array, fromHz: number, rateHz: number): Promise<AudioBuffer> {
  return resampleBuffer(bufferFrom(samples, fromHz), rateHz);
}

/** Decode a file's bytes (any format the browser reads) with a one-line error. */
export async function decodeAudio(ctx: BaseAudioContext, bytes: ArrayBuffer): Promise<AudioBuffer> {
  try {
    return await ctx.decodeAudioData(bytes.slice(0));
  } catch (e) {
    throw new Error(`could not decode the audio file (${e instanceof Error ? e.message : String(e)})`, { cause: e });
  }
}
