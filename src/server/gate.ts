/**
 * A concurrency gate: at most `maxActive` holders at once and at most `maxQueued` waiting; a caller
 * beyond both is refused at once (the route answers 503) instead of joining an unbounded queue.
 * Written here rather than taken from npm: the common limiters (p-limit, p-queue) queue without a
 * bound or reject only through an extra timeout; this needs a refusal the moment the queue is full.
 */
export class Gate {
  private active = 0;
  private readonly waiting: (() => void)[] = [];

  constructor(
    readonly maxActive: number,
    readonly maxQueued: number,
  ) {}

  get running(): number {
    return this.active;
  }

  get queued(): number {
    return this.waiting.length;
  }

  /** Resolves to a release function, or null when the gate and its queue are full. */
  async enter(): Promise<(() => void) | null> {
    if (this.active < this.maxActive) {
      this.active++;
      return this.releaser();
    }
    if (this.waiting.length >= this.maxQueued) return null;
    await new Promise<void>((resolve) => this.waiting.push(resolve));
    // the slot was handed over by release(): `active` already counts us
    return this.releaser();
  }

  private releaser(): () => void {
    let done = false;
    return () => {
      if (done) return;
      done = true;
      const next = this.waiting.shift();
      if (next) next();
      else this.active--;
    };
  }
}
