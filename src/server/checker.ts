/**
 * Compiles descriptions for /api/check in a worker thread: the main thread keeps answering other
 * requests meanwhile, and a compile that passes the time limit is stopped by ending the worker (a
 * fresh one starts with the next check). One compile at a time; others wait their turn (the route
 * is behind the server's concurrency gate, so the wait is bounded).
 */
import { Worker } from 'node:worker_threads';
import type { Diagnostic } from '../description/index.ts';
import type { Grammar } from '../description/ir.ts';

// From the sources (src/, run through tsx) the worker needs the loader shim check-worker.mjs; the
// compiled package (dist/) starts the compiled worker directly.
const ENTRY = import.meta.url.endsWith('.ts') ? new URL('./check-worker.mjs', import.meta.url) : new URL('./check-worker.js', import.meta.url);

export class CheckTimeout extends Error {}

interface Reply {
  readonly id: number;
  readonly grammar: Grammar | null;
  readonly diagnostics: Diagnostic[];
}

export class Checker {
  private worker: { readonly thread: Worker; readonly ready: Promise<Worker> } | null = null;
  private nextId = 1;
  private queue: Promise<unknown> = Promise.resolve();
  private closed = false;

  constructor(readonly timeoutMs: number) {}

  /** Compiles `text` (as compileDescription does) off the main thread; rejects with CheckTimeout. */
  compile(text: string, file: string): Promise<{ grammar: Grammar | null; diagnostics: Diagnostic[] }> {
    const run = this.queue.then(() => this.compileNow(text, file));
    this.queue = run.catch(() => undefined);
    return run;
  }

  /** Starts the worker now (in the background), so the first check does not wait for it to load. */
  warmUp(): void {
    this.start().catch(() => undefined);
  }

  /** The worker, once it has loaded (started on first use and after a stop). */
  private start(): Promise<Worker> {
    if (this.closed) return Promise.reject(new Error('the checker is closed'));
    if (this.worker === null) {
      const w = new Worker(ENTRY);
      w.unref();
      this.worker = {
        thread: w,
        ready: new Promise<Worker>((resolve, reject) => {
          const onReady = (m: { ready?: boolean }) => {
            if (!m.ready) return;
            w.off('message', onReady);
            resolve(w);
          };
          w.on('message', onReady);
          w.once('error', reject);
          w.once('exit', (code) => reject(new Error(`the description checker stopped while starting (exit ${code})`)));
        }),
      };
      w.on('exit', () => {
        if (this.worker?.thread === w) this.worker = null;
      });
    }
    return this.worker.ready;
  }

  private async compileNow(text: string, file: string): Promise<{ grammar: Grammar | null; diagnostics: Diagnostic[] }> {
    const w = await this.start();
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      const done = () => {
        clearTimeout(timer);
        w.off('message', onMessage);
        w.off('error', onError);
        w.off('exit', onExit);
      };
      const onMessage = (m: Reply) => {
        if (m.id !== id) return;
        done();
        resolve({ grammar: m.grammar, diagnostics: m.diagnostics });
      };
      const onError = (e: Error) => {
        done();
        reject(e);
      };
      const onExit = (code: number) => {
        done();
        reject(new Error(`the description checker stopped unexpectedly (exit ${code})`));
      };
      const timer = setTimeout(() => {
        done();
        this.worker = null;
        void w.terminate();
        reject(new CheckTimeout(`compiling ${file} took longer than ${this.timeoutMs} ms`));
      }, this.timeoutMs);
      w.on('message', onMessage);
      w.on('error', onError);
      w.on('exit', onExit);
      w.postMessage({ id, text, file });
    });
  }

  async close(): Promise<void> {
    this.closed = true;
    const w = this.worker;
    this.worker = null;
    if (w !== null) await w.thread.terminate();
  }
}
