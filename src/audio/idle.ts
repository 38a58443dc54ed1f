// Idle policy: a context made here is suspended some seconds after the last sound or message
// (nothing playing, live input off), so an open workspace takes no audio-thread time while the
// user edits; the circuit's state is frozen, not reset. Every message wakes it first: the
// processor applies designs and values at block boundaries, and an edit then settles in the
// background (a DC shift heard at the next play would thump).

/** Seconds of silence (nothing playing, no live input, no message) before a context made here is suspended. */
export const IDLE_SUSPEND_SECONDS = 5;

export class IdlePolicy {
  private timer: ReturnType<typeof setTimeout> | null = null;
  private disposed = false;
  /** Resumed once by a user gesture (play, live input): before that a resume would be refused. */
  private everStarted = false;

  /**
   * @param manages false for a context given from outside (never suspended here)
   * @param busy whether something sounds (playing, live input): then the context stays running
   */
  constructor(
    private readonly ctx: AudioContext | BaseAudioContext,
    private readonly manages: boolean,
    private readonly busy: () => boolean,
    private readonly seconds = IDLE_SUSPEND_SECONDS,
  ) {}

  /** Something happened: resume if suspended (after a first gesture) and restart the countdown. */
  wake(): void {
    if (!this.manages || this.disposed) return;
    if (this.timer) clearTimeout(this.timer);
    const ctx = this.ctx;
    this.timer = setTimeout(() => {
      this.timer = null;
      if (!this.busy() && !this.disposed && ctx.state === 'running' && ctx instanceof AudioContext) void ctx.suspend().catch(() => {});
    }, this.seconds * 1000);
    if (ctx.state === 'suspended' && this.everStarted && ctx instanceof AudioContext) void ctx.resume().catch(() => {});
  }

  /** A user gesture started sound (play, live input): resume now, and from now on on every wake. */
  async start(): Promise<void> {
    if (this.ctx instanceof AudioContext) await this.ctx.resume();
    this.everStarted = true;
    this.wake();
  }

  /** Suspended for want of anything to do. */
  get idle(): boolean {
    return this.manages && this.ctx.state === 'suspended';
  }

  /** `listener(idle)` on every change (the context's own statechange event); returns the unsubscribe. */
  onChange(listener: (idle: boolean) => void): () => void {
    const h = () => listener(this.idle);
    this.ctx.addEventListener('statechange', h);
    return () => this.ctx.removeEventListener('statechange', h);
  }

  dispose(): void {
    this.disposed = true;
    if (this.timer) clearTimeout(this.timer);
    this.timer = null;
  }
}
