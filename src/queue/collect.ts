/**
 * The evaluation's side of the queue: enqueues one job per item and mode that results.jsonl does
 * not hold yet, then collects the rows workers post and hands each to the results log as it comes.
 *
 * Idempotent and restartable: job ids are derived from the set-up's fingerprint, the item id and
 * the mode (protocol.ts), so a collector started again re-enqueues nothing that is still queued or
 * running and picks up rows posted while it was away (they wait in `<name>.rows`). A row is
 * removed from Redis only after results.jsonl holds it (the row job completes after the write);
 * a duplicate (a job run twice, e.g. after a worker died right after posting) is dropped by the
 * log's key check. Jobs that failed for good in an earlier run are retried once more on start.
 *
 * Failure handling: a job that fails on every attempt (2, a second after the first) or whose
 * worker died more than twice (BullMQ's stalled-job count) stops the collection with the item,
 * mode and the worker's reason. A row that fails the checks of protocol.ts is refused with a
 * warning and its job is queued again (three refusals for one job stop the collection).
 * Cost per item: one job write, one row post, one row read — a few Redis round trips (the figure
 * measured on this machine is in README).
 */
import { Queue, Worker, type Job as QueueJob } from 'bullmq';
import type { RowProducer } from '../eval/evaluate.ts';
import type { Job } from '../eval/run.ts';
import { openRedis, redisOptions } from './connect.ts';
import { QueueError, queueErrors, QUEUE_FORMAT_VERSION } from './errors.ts';
import { differingParts, fingerprintKey, type Decoding, type Fingerprint } from './fingerprint.ts';
import { jobId, KEY_PREFIX, queueNames, readFormatRecord, readRowPost, type FormatRecord, type JobData } from './protocol.ts';
import type { RedisTarget } from './url.ts';

export interface CollectOptions {
  readonly target: RedisTarget;
  readonly name: string;
  readonly fp: Fingerprint;
  readonly decoding: Decoding;
  /** progress and warnings, one line each */
  readonly onNote?: (text: string) => void;
}

/** Attempts per job before it counts as failed (a second attempt one second after the first). */
export const JOB_ATTEMPTS = 2;
/** Times a job may be lost with its worker before it counts as failed (BullMQ's maxStalledCount). */
export const MAX_STALLED = 2;
const ADD_CHUNK = 500;
const REFUSALS = 3;

/** A RowProducer whose rows are made by `treewright worker` processes pulling from Redis. */
export function queueProducer(opts: CollectOptions): RowProducer {
  return {
    async produce(jobs, emit) {
      if (jobs.length === 0) return;
      const note = opts.onNote ?? (() => undefined);
      const url = opts.target.display;
      const names = queueNames(opts.name);
      const key = fingerprintKey(opts.fp);
      let fail: (e: Error) => void = () => undefined;
      const failed = new Promise<never>((_, reject) => (fail = reject));
      failed.catch(() => undefined);
      const checked = await openRedis(opts.target, (why) => fail(queueErrors.lost(url, why)));
      const connection = redisOptions(opts.target);
      const queue = new Queue(names.jobs, { connection, prefix: KEY_PREFIX });
      let rows: Worker | null = null;
      let poll: NodeJS.Timeout | null = null;
      try {
        // the queue must be ours (format) and idle, or already working for this same set-up
        const found = readFormatRecord(await checked.client.get(names.format));
        if (found !== null && 'other' in found) throw queueErrors.otherFormat(url, opts.name, found.other);
        if (found !== null && fingerprintKey(found.fp) !== key) {
          const c = await queue.getJobCounts('waiting', 'active', 'delayed', 'prioritized');
          const open = Object.values(c).reduce((a, b) => a + b, 0);
          if (open > 0) throw queueErrors.inUse(url, opts.name, open, differingParts(found.fp, opts.fp));
        }
        const record: FormatRecord = { format: 'treewright-evaluation-queue', version: QUEUE_FORMAT_VERSION, fp: opts.fp, decoding: opts.decoding, jobs: jobs.length };
        await checked.client.set(names.format, JSON.stringify(record));

        const pending = new Map<string, Job>();
        for (const j of jobs) pending.set(jobId(key, j.item.id, j.mode), j);
        const refusals = new Map<string, number>();
        const dataOf = (j: Job): JobData => ({ v: QUEUE_FORMAT_VERSION, fp: opts.fp, decoding: opts.decoding, item: j.item, mode: j.mode });
        const jobOpts = (id: string) => ({ jobId: id, attempts: JOB_ATTEMPTS, backoff: { type: 'fixed', delay: 1000 }, removeOnComplete: true, removeOnFail: false });

        let done: () => void = () => undefined;
        const allDone = new Promise<void>((resolve) => (done = resolve));
        rows = new Worker(
          names.rows,
          async (job: QueueJob) => {
            const id = job.id ?? '';
            const j = pending.get(id);
            if (j === undefined) return; // a duplicate, or a row of another evaluation
            let row;
            try {
              row = readRowPost(id, job.data, { item: j.item, mode: j.mode, key }).row;
            } catch (e) {
              if (!(e instanceof QueueError)) throw e;
              const n = (refusals.get(id) ?? 0) + 1;
              refusals.set(id, n);
              if (n >= REFUSALS) return fail(new QueueError(`${e.message}; refused ${n} times, stopping`));
              note(`warning: refused a row: ${e.message}; the job is queued again`);
              await queue.add('decode', dataOf(j), jobOpts(id));
              return;
            }
            try {
              emit(row);
            } catch (e) {
              return fail(e as Error);
            }
            pending.delete(id);
            if (pending.size === 0) done();
          },
          { connection, prefix: KEY_PREFIX, concurrency: 1, autorun: false },
        );
        rows.on('error', (e) => note(`warning: ${url}: ${e.message}`));

        // jobs that failed for good in an earlier run get another chance
        let retried = 0;
        for (let start = 0; ; start += 1000) {
          const old = await queue.getJobs(['failed'], start, start + 999);
          for (const f of old) if (f.id !== undefined && pending.has(f.id)) (await f.retry('failed'), retried++);
          if (old.length < 1000) break;
        }
        const list = [...pending];
        for (let i = 0; i < list.length; i += ADD_CHUNK) {
          await queue.addBulk(list.slice(i, i + ADD_CHUNK).map(([id, j]) => ({ name: 'decode', data: dataOf(j), opts: jobOpts(id) })));
        }
        note(`queued ${list.length} jobs on ${url} (queue ${opts.name})${retried > 0 ? `, ${retried} of them failed before and are retried` : ''}`);

        // a job that failed for good stops the collection
        poll = setInterval(() => {
          queue
            .getFailedCount()
            .then(async (n) => {
              // failed jobs of other evaluations may sit there too: look through all of them
              for (let start = 0; start < n; start += 500) {
                for (const f of await queue.getJobs(['failed'], start, start + 499)) {
                  const j = f.id === undefined ? undefined : pending.get(f.id);
                  if (j !== undefined) return fail(queueErrors.failed(j.item.id, j.mode, String(f.failedReason ?? 'no reason given').slice(0, 2000)));
                }
              }
            })
            .catch((e: Error) => note(`warning: ${url}: ${e.message}`));
        }, 2000);

        void rows.run().catch((e: Error) => fail(e));
        await Promise.race([allDone, failed]);
        await checked.client.del(names.format);
      } finally {
        if (poll !== null) clearInterval(poll);
        await rows?.close();
        await queue.close();
        await checked.close();
      }
    },
  };
}
