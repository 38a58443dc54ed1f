// Messages between the main thread and the take recorder (worklets/take.worklet.ts), which
// records the live input (the DI, before the circuit) so a take can be auditioned through both
// designs afterwards. Buffers go back and forth by transfer: the main thread hands the processor
// a pool of empty chunks, the processor returns each one full, the main thread copies it out and
// hands it back. The processor allocates nothing while recording.

export const TAKE_PROCESSOR_NAME = 'valvewright-take';
/** Samples per chunk (0.1 s at 48 kHz). */
export const TAKE_CHUNK_SAMPLES = 4800;
/** Chunks in the pool: the main thread may fall this far behind (1.6 s at 48 kHz) before samples drop. */
export const TAKE_POOL_CHUNKS = 16;

export type TakeToProcessor = { readonly type: 'buffers'; readonly buffers: readonly Float32Array[] } | { readonly type: 'start' } | { readonly type: 'stop' };

export type TakeFromProcessor =
  /** A chunk holding `length` samples (the last one of a take may be partial). */
  | { readonly type: 'chunk'; readonly samples: Float32Array; readonly length: number }
  /** After 'stop' (and its last chunk): samples lost because no empty chunk was at hand. */
  | { readonly type: 'stopped'; readonly droppedSamples: number };
