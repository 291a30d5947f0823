/**
 * Local worker processes: N child processes on this machine each load the model once and make
 * rows for the jobs the parent hands them, one job at a time per child (the next job goes to
 * whichever child is free). Rows are passed on in the jobs' order — a row that finishes early
 * waits until the rows before it are done — so results.jsonl comes out in the same order as a
 * run in one process, and is the same file apart from the timing fields.
 *
 * Why processes and not threads: onnxruntime sessions, the SQLite handle and the mask engine are
 * all per process here; a child that crashes (out of memory, a native fault) is seen as an exit
 * and reported, without taking the parent down.
 *
 * Messages (structured clone over the IPC channel):
 *   parent → child  {type: 'init', init}              child → parent  {type: 'ready'} | {type: 'failed', message}
 *   parent → child  {type: 'job', seq, item, mode}    child → parent  {type: 'row', seq, row} | {type: 'failed', seq, message}
 * The child side is `serveJobs` below; the parent side is `processPool`.
 *
 * Each child uses onnxruntime's own thread count (as one process does). Cost: each child holds its own model (the shipped one ~40 MB resident; a 60M-parameter model a
 * few hundred MB) and compiles or loads the grammar's masks once; rows waiting for an earlier row
 * are held in memory (at most a few per child in practice).
 * Limits: a child that dies stops the run with an error (the rows written so far are kept; the
 * same command continues). Past one machine, use the Redis queue (src/queue/).
 */
import { fork, type ChildProcess } from 'node:child_process';
import type { RowProducer } from './evaluate.ts';
import type { EvalItem, EvalRow, Job, Mode, RowMaker } from './run.ts';

export type ParentMessage = { type: 'init'; init: unknown } | { type: 'job'; seq: number; item: EvalItem; mode: Mode };
export type ChildMessage = { type: 'ready' } | { type: 'failed'; seq?: number; message: string } | { type: 'row'; seq: number; row: EvalRow };

export interface PoolOptions {
  /** number of child processes (at most one per job) */
  readonly size: number;
  /** the child's entry module (it calls serveJobs) */
  readonly entry: string;
  /** what the child needs to set itself up, sent as the first message */
  readonly init: unknown;
  /** node options for the child (e.g. a loader) */
  readonly execArgv?: readonly string[];
  /** called when a child is ready (progress display) */
  readonly onReady?: (ready: number, total: number) => void;
}

/** A RowProducer running jobs in `size` child processes; rows come out in the jobs' order. */
export function processPool(opts: PoolOptions): RowProducer {
  return {
    produce(jobs, emit) {
      return new Promise<void>((resolve, reject) => {
        if (jobs.length === 0) return resolve();
        const size = Math.max(1, Math.min(opts.size, jobs.length));
        const children: ChildProcess[] = [];
        const busy = new Map<ChildProcess, number>();
        const finished = new Map<number, EvalRow>();
        let next = 0; // next job to hand out
        let cursor = 0; // next row to emit
        let ready = 0;
        let over = false;

        const stop = (err: Error | null) => {
          if (over) return;
          over = true;
          for (const c of children) {
            c.removeAllListeners('exit');
            // on success the children were disconnected and leave by themselves
            if (err && c.exitCode === null && c.signalCode === null) c.kill('SIGKILL');
          }
          if (err) reject(err);
          else resolve();
        };
        const give = (c: ChildProcess) => {
          if (over || next >= jobs.length) return;
          const seq = next++;
          busy.set(c, seq);
          const j: Job = jobs[seq];
          c.send({ type: 'job', seq, item: j.item, mode: j.mode } satisfies ParentMessage);
        };
        const flush = () => {
          while (finished.has(cursor)) {
            const row = finished.get(cursor)!;
            finished.delete(cursor);
            cursor++;
            try {
              emit(row);
            } catch (e) {
              return stop(e as Error);
            }
          }
          if (cursor === jobs.length) {
            for (const c of children) c.disconnect();
            stop(null);
          }
        };

        for (let i = 0; i < size; i++) {
          const c = fork(opts.entry, [], { stdio: ['ignore', 'inherit', 'inherit', 'ipc'], serialization: 'advanced', execArgv: [...(opts.execArgv ?? [])] });
          children.push(c);
          c.on('message', (m: ChildMessage) => {
            if (over) return;
            if (m.type === 'ready') {
              ready++;
              opts.onReady?.(ready, size);
              give(c);
            } else if (m.type === 'row') {
              busy.delete(c);
              finished.set(m.seq, m.row);
              give(c);
              flush();
            } else {
              const j = m.seq === undefined ? null : jobs[m.seq];
              stop(new Error(`worker process ${i + 1} of ${size}${j ? ` (item ${JSON.stringify(j.item.id)}, ${j.mode})` : ''}: ${m.message}`));
            }
          });
          c.on('error', (e) => stop(new Error(`worker process ${i + 1} of ${size}: ${e.message}`)));
          c.on('exit', (code, signal) => {
            const seq = busy.get(c);
            const doing = seq === undefined ? '' : ` while decoding item ${JSON.stringify(jobs[seq].item.id)} (${jobs[seq].mode})`;
            stop(
              new Error(
                `worker process ${i + 1} of ${size} stopped (${signal ?? `exit code ${code}`})${doing}; ` +
                  `the rows written so far are kept in results.jsonl: run the same command again to continue`,
              ),
            );
          });
          c.send({ type: 'init', init: opts.init } satisfies ParentMessage);
        }
      });
    },
  };
}

/**
 * The child side: waits for the init message, sets up with `setup(init)` (which returns the
 * RowMaker, e.g. after loading the model), then makes one row per job message. Exits when the
 * parent goes away.
 */
export function serveJobs(setup: (init: unknown) => Promise<RowMaker>): void {
  const send = (m: ChildMessage) => process.send!(m);
  let maker: RowMaker | null = null;
  process.on('disconnect', () => process.exit(0));
  process.on('message', (m: ParentMessage) => {
    if (m.type === 'init') {
      setup(m.init).then(
        (got) => {
          maker = got;
          send({ type: 'ready' });
        },
        (e: unknown) => send({ type: 'failed', message: e instanceof Error ? e.message : String(e) }),
      );
    } else if (m.type === 'job') {
      if (maker === null) return send({ type: 'failed', seq: m.seq, message: 'a job came before the set-up finished' });
      maker.row(m.item, m.mode).then(
        (row) => send({ type: 'row', seq: m.seq, row }),
        (e: unknown) => send({ type: 'failed', seq: m.seq, message: e instanceof Error ? e.message : String(e) }),
      );
    }
  });
}
