/**
 * The compile workers: every piece of work a request's description, program text, tree or names
 * need runs in a worker thread (compile-worker.ts), never on the main thread, which only routes,
 * runs the model and serialises. Each job has a time limit (a job past it ends its worker → the
 * caller answers 504) and each worker has V8 heap limits (`resourceLimits`; a job that exhausts
 * them ends its worker → 422). A fresh worker replaces an ended one; its warm-up (startup grammars'
 * parsers and mask tables) runs before the time limits start.
 *
 * A small pool (default 2 workers, one job each at a time) so one slow description check does not
 * hold every parse; jobs wait in a bounded queue (full → Overloaded, the caller's 503).
 */
import { Worker } from 'node:worker_threads';
import type { GrammarRef, Job, JobError, NamesMsg } from './compile-worker.ts';

export type { GrammarRef, Job, JobError, NamesMsg } from './compile-worker.ts';

// From the sources (src/, run through tsx) the worker needs the loader shim compile-worker.mjs; the
// compiled package (dist/) starts the compiled worker directly.
const ENTRY = import.meta.url.endsWith('.ts') ? new URL('./compile-worker.mjs', import.meta.url) : new URL('./compile-worker.js', import.meta.url);

/** A job ran past the time limit; its worker was ended. */
export class JobTimeout extends Error {}
/** A job exhausted its worker's memory limits; the worker was ended. */
export class JobOutOfMemory extends Error {}
/** Every worker is busy and the queue is full. */
export class JobsOverloaded extends Error {}
/** The job failed in the worker with the error described by `error` (its class name, message, fields). */
export class JobFailed extends Error {
  constructor(readonly error: JobError) {
    super(error.message);
  }
}

export interface CompilerOptions {
  /** time limit of one job in ms, counted from the moment a loaded worker takes it */
  readonly timeoutMs: number;
  /** worker threads (default 2) */
  readonly workers?: number;
  /** V8 old-generation heap limit per worker in MB (default 512) */
  readonly memoryMb?: number;
  /** jobs waiting for a worker before new ones are refused (default 64) */
  readonly maxQueued?: number;
}

/** What a fresh worker prepares before it reports ready. */
export interface WarmData {
  readonly grammars: GrammarRef[];
  readonly tokenizers: string[];
  /** per grammar (same order), the server's bindings to bind in advance, if any */
  readonly names: (NamesMsg | undefined)[];
}

interface Slot {
  worker: Worker | null;
  ready: Promise<Worker> | null;
  busy: boolean;
}

interface Pending {
  readonly job: Job;
  readonly label: string;
  readonly timed: boolean;
  readonly resolve: (v: unknown) => void;
  readonly reject: (e: Error) => void;
}

export class Compiler {
  private readonly slots: Slot[];
  private readonly pending: Pending[] = [];
  private nextId = 1;
  private closed = false;
  private warm: WarmData = { grammars: [], tokenizers: [], names: [] };
  readonly timeoutMs: number;
  readonly memoryMb: number;
  private readonly maxQueued: number;

  constructor(opts: CompilerOptions) {
    this.timeoutMs = opts.timeoutMs;
    this.memoryMb = opts.memoryMb ?? 512;
    this.maxQueued = opts.maxQueued ?? 64;
    this.slots = Array.from({ length: Math.max(1, opts.workers ?? 2) }, () => ({ worker: null, ready: null, busy: false }));
  }

  /** What workers started from now on prepare before taking jobs. */
  setWarmUp(data: WarmData): void {
    this.warm = data;
  }

  /** Starts every worker now, so the first jobs do not wait for them to load; resolves once all have loaded (or failed to). */
  async warmUp(): Promise<void> {
    await Promise.all(this.slots.map((s) => this.start(s).catch(() => undefined)));
  }

  /**
   * Runs `job` in a worker; `label` names the work in a time-limit message. Rejects with JobTimeout,
   * JobOutOfMemory, JobsOverloaded or JobFailed. `timed: false` (the operator's own startup
   * grammars only) runs it without the time limit.
   */
  run<T>(job: Job, label: string, timed = true): Promise<T> {
    if (this.closed) return Promise.reject(new Error('the compile workers are closed'));
    if (this.pending.length >= this.maxQueued) return Promise.reject(new JobsOverloaded(`${this.pending.length} jobs are waiting for the compile workers`));
    return new Promise<T>((resolve, reject) => {
      this.pending.push({ job, label, timed, resolve: resolve as (v: unknown) => void, reject });
      this.dispatch();
    });
  }

  private dispatch(): void {
    for (const s of this.slots) {
      if (this.pending.length === 0) return;
      if (s.busy) continue;
      const p = this.pending.shift()!;
      s.busy = true;
      this.runOn(s, p)
        .then(p.resolve, p.reject)
        .finally(() => {
          s.busy = false;
          this.dispatch();
        });
    }
  }

  /** The slot's worker once loaded (started on first use and after one was ended). */
  private start(s: Slot): Promise<Worker> {
    if (this.closed) return Promise.reject(new Error('the compile workers are closed'));
    if (s.ready === null) {
      const w = new Worker(ENTRY, { workerData: this.warm, resourceLimits: { maxOldGenerationSizeMb: this.memoryMb, maxYoungGenerationSizeMb: 32 } });
      w.unref();
      s.worker = w;
      s.ready = new Promise<Worker>((resolve, reject) => {
        const onReady = (m: { ready?: boolean }) => {
          if (!m.ready) return;
          w.off('message', onReady);
          resolve(w);
        };
        w.on('message', onReady);
        w.once('error', reject);
        w.once('exit', (code) => reject(new Error(`a compile worker stopped while starting (exit ${code})`)));
      });
      // an ended worker is replaced on next use
      w.on('exit', () => {
        if (s.worker === w) {
          s.worker = null;
          s.ready = null;
        }
      });
      w.on('error', () => undefined);
    }
    return s.ready;
  }

  private async runOn(s: Slot, p: Pending): Promise<unknown> {
    const w = await this.start(s);
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      const done = () => {
        clearTimeout(timer);
        w.off('message', onMessage);
        w.off('error', onError);
        w.off('exit', onExit);
      };
      const onMessage = (m: { id: number; ok?: unknown; err?: JobError }) => {
        if (m.id !== id) return;
        done();
        if (m.err !== undefined) reject(new JobFailed(m.err));
        else resolve(m.ok);
      };
      const onError = (e: Error & { code?: string }) => {
        done();
        if (e.code === 'ERR_WORKER_OUT_OF_MEMORY') reject(new JobOutOfMemory(`${p.label} needed more than the compile worker's ${this.memoryMb} MB heap and was stopped`));
        else reject(e);
      };
      const onExit = (code: number) => {
        done();
        reject(new Error(`a compile worker stopped unexpectedly (exit ${code})`));
      };
      const timer = !p.timed ? undefined : setTimeout(() => {
        done();
        if (s.worker === w) {
          s.worker = null;
          s.ready = null;
        }
        void w.terminate();
        reject(new JobTimeout(`${p.label} took longer than ${this.timeoutMs} ms`));
      }, this.timeoutMs);
      w.on('message', onMessage);
      w.on('error', onError);
      w.on('exit', onExit);
      w.postMessage({ id, job: p.job });
    });
  }

  async close(): Promise<void> {
    this.closed = true;
    for (const p of this.pending.splice(0)) p.reject(new Error('the compile workers are closed'));
    await Promise.all(
      this.slots.map(async (s) => {
        const w = s.worker;
        s.worker = null;
        s.ready = null;
        if (w !== null) await w.terminate();
      }),
    );
  }
}
