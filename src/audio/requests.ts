// Messages to the processor, in order, some of them waiting for a plan built off the audio
// thread; and replies matched to their requests by id (never by the text of a message).
// No Tone.js and no worker here: tests/realtime-plan.test.ts drives these with the dual-slot
// engine in Node.
import type { FromProcessor, Slot, ToProcessor } from '../dsp/realtime/messages.ts';

/** What a design load resolves with (the processor's 'loaded' reply). */
export interface LoadedInfo {
  readonly slot: Slot;
  readonly designName: string;
  readonly latencySamples: number;
  readonly tubeIds: readonly string[];
}

/**
 * Requests that wait for the processor's reply. Each gets a fresh id; a 'loaded' or 'error'
 * reply carrying that id settles it, and nothing else does (a refused message on slot B never
 * touches slot A's pending load).
 */
export class PendingReplies {
  private nextId = 1;
  private readonly waiting = new Map<number, { resolve: (i: LoadedInfo) => void; reject: (e: Error) => void }>();

  /** A fresh id for a message whose reply nobody waits for (its error still reaches the listeners). */
  id(): number {
    return this.nextId++;
  }

  /** A fresh id and the promise its reply settles. */
  open(): { id: number; reply: Promise<LoadedInfo> } {
    const id = this.nextId++;
    const reply = new Promise<LoadedInfo>((resolve, reject) => this.waiting.set(id, { resolve, reject }));
    return { id, reply };
  }

  /** Settle request `id` with an error of ours (its message never reached the processor). */
  fail(id: number, e: Error): void {
    const w = this.waiting.get(id);
    if (!w) return;
    this.waiting.delete(id);
    w.reject(e);
  }

  /** A message from the processor: settles the request it answers, if one waits. */
  settle(m: FromProcessor): void {
    if ((m.type !== 'loaded' && m.type !== 'error') || m.requestId === undefined) return;
    const w = this.waiting.get(m.requestId);
    if (!w) return;
    this.waiting.delete(m.requestId);
    if (m.type === 'loaded') w.resolve({ slot: m.slot, designName: m.designName, latencySamples: m.latencySamples, tubeIds: m.tubeIds });
    else w.reject(new Error(m.message));
  }

  get size(): number {
    return this.waiting.size;
  }

  rejectAll(e: Error): void {
    for (const [, w] of this.waiting) w.reject(e);
    this.waiting.clear();
  }
}

/**
 * Posts messages in the order they were sent, though some wait for a plan: a message given as a
 * promise holds back the ones after it until it settles (plans are built concurrently; only the
 * posting is ordered). A promise that rejects (or resolves to null) posts nothing; `onDropped`
 * hears why.
 */
export class Outbox {
  private chain: Promise<void> = Promise.resolve();
  private held = 0;

  constructor(
    private readonly post: (m: ToProcessor) => void,
    private readonly onDropped: (e: Error) => void = () => {},
  ) {}

  send(m: ToProcessor | Promise<ToProcessor | null>): void {
    if (!(m instanceof Promise) && this.held === 0) {
      this.post(m);
      return;
    }
    this.held++;
    const msg = m instanceof Promise ? m : Promise.resolve(m);
    this.chain = this.chain
      .then(() => msg)
      .then(
        (x) => {
          if (x) this.post(x);
        },
        (e: unknown) => this.onDropped(e instanceof Error ? e : new Error(String(e))),
      )
      .finally(() => {
        this.held--;
      });
  }

  /** Messages still waiting for a plan (or behind one). */
  get pending(): number {
    return this.held;
  }

  /** Resolves once every message sent so far has been posted (or dropped). */
  flushed(): Promise<void> {
    return this.chain;
  }
}
