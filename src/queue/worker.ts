/**
 * The worker's side of the queue: pulls one job at a time from `<name>.jobs`, checks it (format,
 * sizes, and that it was made for this worker's model, grammar, names and executor), makes the
 * row with the same RowMaker an in-process evaluation uses, and posts it to `<name>.rows` under the
 * job's id.
 *
 * A job made for another set-up is refused: it goes back to the waiting list (for a worker with
 * the right files) and this worker stops with a message naming the parts that differ. A job whose
 * data fails the checks fails for good (the collector reports it). While a job runs, the worker
 * renews its lease every lease/2; a worker that dies (SIGKILL, power loss) stops renewing, and
 * once the lease runs out a live worker's stalled-job check puts the job back in the waiting list
 * — so a dead worker's job is run again elsewhere, at most `lease` to `2 × lease` seconds later.
 *
 * Posting the row before the job completes means a worker killed between the two makes the row
 * twice; the collector keeps the first (rows are keyed by item and mode).
 */
import { hostname } from 'node:os';
import type { Redis } from 'ioredis';
import { Queue, UnrecoverableError, WaitingError, Worker, type Job as QueueJob } from 'bullmq';
import type { EvalRow, RowMaker } from '../eval/run.ts';
import { openRedis, redisOptions } from './connect.ts';
import { QueueError, queueErrors, QUEUE_FORMAT_VERSION } from './errors.ts';
import { differingParts, fingerprintKey, type Decoding, type Fingerprint } from './fingerprint.ts';
import { KEY_PREFIX, queueNames, readFormatRecord, readJobData, type RowPost } from './protocol.ts';
import { MAX_STALLED } from './collect.ts';
import type { RedisTarget } from './url.ts';

/** The parts of a fingerprint a worker computes from its own files (the decoding options come with each job). */
export type LocalFingerprint = Omit<Fingerprint, 'decoding'>;
const LOCAL_PARTS = ['model', 'grammar', 'names', 'execution'] as const;

export interface WorkerRunOptions {
  readonly target: RedisTarget;
  readonly name: string;
  readonly local: LocalFingerprint;
  /** the RowMaker for a job's decoding options */
  readonly maker: (decoding: Decoding) => RowMaker;
  /** seconds a job stays with a worker that stopped answering before another takes it */
  readonly leaseSeconds: number;
  /** stop after this many seconds without a job (default: never) */
  readonly idleExitSeconds?: number;
  readonly onNote?: (text: string) => void;
  readonly onRow?: (row: EvalRow) => void;
}

export interface RunningWorker {
  /** resolves with the number of rows posted when the worker stops; rejects with a QueueError */
  readonly finished: Promise<number>;
  /** stops after the job in hand (if any) is posted */
  stop(): Promise<void>;
}

/** Who a worker is, in posted rows and messages. */
export function workerName(): string {
  return `${hostname()}:${process.pid}`;
}

/** Refuses a queue whose format record is not a treewright evaluation's of this format, or names other files. */
async function checkRecord(client: Redis, target: RedisTarget, name: string, local: LocalFingerprint): Promise<void> {
  const found = readFormatRecord(await client.get(queueNames(name).format));
  if (found !== null && 'other' in found) throw queueErrors.otherFormat(target.display, name, found.other);
  if (found !== null) {
    const parts = differingParts(found.fp, { ...local, decoding: found.fp.decoding }, LOCAL_PARTS);
    if (parts.length > 0) throw queueErrors.mismatch(`--queue ${target.display}: queue ${JSON.stringify(name)} holds an evaluation`, parts, found.fp, local);
  }
}

/**
 * The checks startWorker makes before it pulls jobs — Redis reachable, the queue's format, the
 * evaluation's files — without pulling any: a worker runs them before it loads its model.
 */
export async function checkQueue(target: RedisTarget, name: string, local: LocalFingerprint): Promise<void> {
  const checked = await openRedis(target, () => undefined);
  try {
    await checkRecord(checked.client, target, name, local);
  } finally {
    await checked.close();
  }
}

/** Connects, checks the queue's format record, and starts pulling jobs. */
export async function startWorker(opts: WorkerRunOptions): Promise<RunningWorker> {
  const url = opts.target.display;
  const names = queueNames(opts.name);
  const note = opts.onNote ?? (() => undefined);
  let settle: { resolve: (n: number) => void; reject: (e: Error) => void } = { resolve: () => undefined, reject: () => undefined };
  const finished = new Promise<number>((resolve, reject) => (settle = { resolve, reject }));
  let stopping: Promise<void> | null = null;
  let posted = 0;

  const checked = await openRedis(opts.target, (why) => void stop(queueErrors.lost(url, why)));
  try {
    await checkRecord(checked.client, opts.target, opts.name, opts.local);
  } catch (e) {
    await checked.close();
    throw e;
  }

  const connection = redisOptions(opts.target);
  const rows = new Queue(names.rows, { connection, prefix: KEY_PREFIX });
  const me = workerName();
  let lastActive = Date.now();
  let busy = false;

  const worker = new Worker(
    names.jobs,
    async (job: QueueJob, token?: string) => {
      busy = true;
      try {
        const id = job.id ?? '';
        let data;
        try {
          data = readJobData(id, job.data);
        } catch (e) {
          if (e instanceof QueueError) throw new UnrecoverableError(e.message);
          throw e;
        }
        const parts = differingParts(data.fp, { ...opts.local, decoding: data.fp.decoding }, LOCAL_PARTS);
        if (parts.length > 0) {
          // refuse: back to the waiting list for a worker with the right files, and stop
          await job.moveToWait(token);
          void stop(queueErrors.mismatch(`job ${id}:`, parts, data.fp, opts.local));
          throw new WaitingError();
        }
        const row = await opts.maker(data.decoding).row(data.item, data.mode);
        const post: RowPost = { v: QUEUE_FORMAT_VERSION, key: fingerprintKey(data.fp), worker: me, row };
        await rows.add('row', post, { jobId: id, removeOnComplete: true, removeOnFail: true });
        posted++;
        opts.onRow?.(row);
      } finally {
        busy = false;
        lastActive = Date.now();
      }
    },
    {
      connection,
      prefix: KEY_PREFIX,
      // recorded in each job it takes (the job's "pb" field), so one can see who holds a job
      name: me,
      concurrency: 1,
      autorun: false,
      lockDuration: opts.leaseSeconds * 1000,
      stalledInterval: opts.leaseSeconds * 1000,
      maxStalledCount: MAX_STALLED,
    },
  );
  worker.on('error', (e) => note(`warning: ${url}: ${e.message}`));
  worker.on('failed', (job, e) => {
    if (e instanceof WaitingError || e.name === 'WaitingError') return;
    note(`job ${job?.id ?? '?'} failed: ${e.message}`);
  });

  const idle =
    opts.idleExitSeconds === undefined
      ? null
      : setInterval(() => {
          if (!busy && Date.now() - lastActive > opts.idleExitSeconds! * 1000) void stop(null);
        }, 250);

  function stop(err: Error | null): Promise<void> {
    stopping ??= (async () => {
      if (idle !== null) clearInterval(idle);
      try {
        await worker.close();
        await rows.close();
      } catch (e) {
        err ??= e as Error;
      }
      await checked.close();
      if (err) settle.reject(err);
      else settle.resolve(posted);
    })();
    return stopping;
  }

  void worker.run().catch((e: Error) => void stop(e));
  return { finished, stop: () => stop(null) };
}
