/**
 * queue/ — evaluation past one machine: a job queue on Redis (BullMQ) between `treewright
 * evaluate --queue URL` (enqueues one job per item and mode, collects the rows into results.jsonl)
 * and any number of `treewright worker --queue URL` processes on any machines (pull a job, decode,
 * execute, post the row).
 *
 * Example:
 *   const target = parseRedisUrl('redis://10.0.0.5:6379');
 *   await evaluate({ items, producer: queueProducer({ target, name: 'treewright', fp, decoding }), outDir, meta });
 *   // elsewhere: const w = await startWorker({ target, name: 'treewright', local, maker, leaseSeconds: 30 }); await w.finished;
 *
 * Guarantees: jobs are keyed by item id, mode and the set-up's fingerprint (model files, grammar,
 * names, database or executor, decoding options), so enqueuing twice is a no-op and every row is
 * written once; a worker killed mid-job has its job run again by another worker once its lease
 * (default 30 s) runs out; a worker with other files refuses the job and says which part differs;
 * everything read from Redis is checked and bounded (protocol.ts).
 * Worst-case cost: a few Redis round trips per item (measured overhead in README), one model per
 * worker process; Redis holds each queued item's question and gold program (a few hundred bytes)
 * and each row until the collector has written it.
 * Limits: one collector per queue name at a time; rows are written in the order they arrive (the
 * figures do not depend on it); workers run one job at a time (run several per machine for more).
 */
export { parseRedisUrl, checkQueueName, type RedisTarget } from './url.ts';
export { QueueError, QUEUE_FORMAT_VERSION } from './errors.ts';
export { fingerprint, fingerprintKey, modelHash, namesHash, decodingHash, executionHash, fileHash, differingParts, type Fingerprint, type Decoding, type FingerprintInput } from './fingerprint.ts';
export { jobId, queueNames, readJobData, readRowPost, readFormatRecord, LIMITS, KEY_PREFIX, type JobData, type RowPost, type FormatRecord } from './protocol.ts';
export { queueProducer, JOB_ATTEMPTS, MAX_STALLED, type CollectOptions } from './collect.ts';
export { startWorker, checkQueue, workerName, type WorkerRunOptions, type RunningWorker, type LocalFingerprint } from './worker.ts';
