/**
 * What travels through Redis, and the checks on it. Everything read back from Redis is untrusted
 * (any client of the server can write there): it is checked field by field, with sizes bounded,
 * before it is used, and a problem is reported as `job <id>: <JSON path>: expected …, found …`.
 *
 * Keys (BullMQ prefix `treewright`): the queue `<name>.jobs` holds one job per item and mode,
 * `<name>.rows` the rows workers post back, and `treewright:<name>:format` a JSON record of the
 * evaluation that owns the queue (format version, fingerprint, decoding options).
 *
 * A job's id is `e<FORMAT>-` + SHA-256(fingerprint key, item id, mode) (first 40 hex digits): the
 * same item, mode and set-up give the same id, so enqueuing again is a no-op (BullMQ ignores an id it
 * holds) and a row is posted under the id of its job.
 */
import { createHash } from 'node:crypto';
import { checkRow, MODES, type EvalItem, type EvalRow, type Mode } from '../eval/run.ts';
import { describe, QUEUE_FORMAT_VERSION, QueueError, queueErrors } from './errors.ts';
import { decodingHash, fingerprintKey, FINGERPRINT_PARTS, type Decoding, type Fingerprint } from './fingerprint.ts';

export const KEY_PREFIX = 'treewright';

/** Bounds on what a job or a row may hold. */
export const LIMITS = {
  id: 512,
  split: 256,
  question: 20_000,
  gold: 200_000,
  prefix: 1_000,
  maxTokens: 65_536,
  /** JSON size of a job's data */
  jobBytes: 512 * 1024,
  /** JSON size of a posted row */
  rowBytes: 4 * 1024 * 1024,
} as const;

export interface QueueNames {
  readonly jobs: string;
  readonly rows: string;
  /** the Redis key of the format record */
  readonly format: string;
}

export function queueNames(name: string): QueueNames {
  return { jobs: `${name}.jobs`, rows: `${name}.rows`, format: `${KEY_PREFIX}:${name}:format` };
}

/** The data of one job. */
export interface JobData {
  readonly v: number;
  readonly fp: Fingerprint;
  readonly decoding: Decoding;
  readonly item: EvalItem;
  readonly mode: Mode;
}

/** The data of one posted row. */
export interface RowPost {
  readonly v: number;
  /** fingerprint key of the job it answers */
  readonly key: string;
  /** who made it: host and process id */
  readonly worker: string;
  readonly row: EvalRow;
}

/** The record at `treewright:<name>:format`. */
export interface FormatRecord {
  readonly format: 'treewright-evaluation-queue';
  readonly version: number;
  readonly fp: Fingerprint;
  readonly decoding: Decoding;
  readonly jobs: number;
}

export function jobId(fpKey: string, id: string, mode: Mode): string {
  const h = createHash('sha256').update(`${fpKey}\u0000${id}\u0000${mode}`).digest('hex');
  return `e${QUEUE_FORMAT_VERSION}-${h.slice(0, 40)}`;
}

type Obj = Record<string, unknown>;

const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);

class Reader {
  constructor(private readonly jobId: string) {}
  fail(path: string, expected: string, found: unknown): never {
    throw queueErrors.badJob(this.jobId, path, expected, found);
  }
  obj(v: unknown, path: string): Obj {
    if (!isObj(v)) this.fail(path, 'an object', v);
    return v;
  }
  str(v: unknown, path: string, max: number, pattern?: RegExp): string {
    if (typeof v !== 'string' || v.length > max || (pattern !== undefined && !pattern.test(v))) this.fail(path, `a string of at most ${max} characters${pattern ? ` matching ${pattern.source}` : ''}`, v);
    return v;
  }
  int(v: unknown, path: string, min: number, max: number): number {
    if (typeof v !== 'number' || !Number.isSafeInteger(v) || v < min || v > max) this.fail(path, `an integer from ${min} to ${max}`, v);
    return v;
  }
  num(v: unknown, path: string): number {
    if (typeof v !== 'number' || !Number.isFinite(v) || v < 0) this.fail(path, 'a finite number ≥ 0', v);
    return v;
  }
  bool(v: unknown, path: string): boolean {
    if (typeof v !== 'boolean') this.fail(path, 'true or false', v);
    return v;
  }
  size(v: unknown, path: string, max: number): void {
    const n = Buffer.byteLength(JSON.stringify(v) ?? '');
    if (n > max) this.fail(path, `at most ${max} bytes of JSON`, `${n} bytes`);
  }
}

const HEX64 = /^[0-9a-f]{64}$/;

function readFingerprint(r: Reader, v: unknown, path: string): Fingerprint {
  const o = r.obj(v, path);
  const out: Record<string, string> = {};
  for (const p of FINGERPRINT_PARTS) out[p] = r.str(o[p], `${path}.${p}`, 64, HEX64);
  return out as unknown as Fingerprint;
}

function readDecoding(r: Reader, v: unknown, path: string): Decoding {
  const o = r.obj(v, path);
  return {
    beam: o.beam === null ? null : r.int(o.beam, `${path}.beam`, 1, 64),
    maxTokens: o.maxTokens === null ? null : r.int(o.maxTokens, `${path}.maxTokens`, 1, LIMITS.maxTokens),
    prefix: o.prefix === null ? null : r.str(o.prefix, `${path}.prefix`, LIMITS.prefix),
  };
}

/**
 * Checks a job's data as read from Redis. Throws a QueueError naming the job and the JSON path;
 * a job of another format version is refused with the version found.
 */
export function readJobData(id: string, data: unknown): JobData {
  const r = new Reader(id);
  const o = r.obj(data, '$');
  r.size(o, '$', LIMITS.jobBytes);
  if (o.v !== QUEUE_FORMAT_VERSION) r.fail('$.v', `format version ${QUEUE_FORMAT_VERSION} (this treewright's)`, o.v);
  const fp = readFingerprint(r, o.fp, '$.fp');
  const decoding = readDecoding(r, o.decoding, '$.decoding');
  if (decodingHash(decoding) !== fp.decoding) r.fail('$.fp.decoding', 'the hash of $.decoding', fp.decoding);
  const it = r.obj(o.item, '$.item');
  const item: EvalItem = {
    id: r.str(it.id, '$.item.id', LIMITS.id),
    split: r.str(it.split, '$.item.split', LIMITS.split),
    question: r.str(it.question, '$.item.question', LIMITS.question),
    gold: r.str(it.gold, '$.item.gold', LIMITS.gold),
  };
  if (typeof o.mode !== 'string' || !(MODES as readonly string[]).includes(o.mode)) r.fail('$.mode', MODES.join(' or '), o.mode);
  const mode = o.mode as Mode;
  if (jobId(fingerprintKey(fp), item.id, mode) !== id) r.fail('$', `data whose fingerprint, item id and mode give the job's id`, `another id, ${jobId(fingerprintKey(fp), item.id, mode)}`);
  return { v: QUEUE_FORMAT_VERSION, fp, decoding, item, mode };
}

/**
 * Checks a posted row against the job it answers: every field of results.jsonl with its type, the
 * item's own id, split, question and gold, the job's mode and fingerprint. Returns the row.
 */
export function readRowPost(id: string, data: unknown, want: { readonly item: EvalItem; readonly mode: Mode; readonly key: string }): { row: EvalRow; worker: string } {
  const r = new Reader(id);
  const o = r.obj(data, '$');
  r.size(o, '$', LIMITS.rowBytes);
  if (o.v !== QUEUE_FORMAT_VERSION) r.fail('$.v', `format version ${QUEUE_FORMAT_VERSION} (this treewright's)`, o.v);
  if (o.key !== want.key) r.fail('$.key', `this evaluation's fingerprint key ${want.key.slice(0, 12)}…`, o.key);
  const worker = r.str(o.worker, '$.worker', 300);
  const row = r.obj(o.row, '$.row');
  const same = (field: 'id' | 'split' | 'question' | 'gold') => {
    if (row[field] !== want.item[field]) r.fail(`$.row.${field}`, `the item's ${field} ${describe(want.item[field])}`, row[field]);
  };
  same('id');
  same('split');
  same('question');
  same('gold');
  if (row.mode !== want.mode) r.fail('$.row.mode', JSON.stringify(want.mode), row.mode);
  r.str(row.text, '$.row.text', LIMITS.gold);
  r.int(row.tokens, '$.row.tokens', 0, LIMITS.maxTokens * 64);
  for (const f of ['latency_ms', 'model_ms', 'mask_ms', 'mask_share'] as const) r.num(row[f], `$.row.${f}`);
  r.bool(row.truncated, '$.row.truncated');
  const texts = row.token_texts;
  if (texts !== null) {
    if (!Array.isArray(texts)) return r.fail('$.row.token_texts', 'null or an array of strings', texts);
    texts.forEach((t: unknown, i: number) => r.str(t, `$.row.token_texts[${i}]`, LIMITS.gold));
  }
  try {
    checkRow(row);
  } catch (e) {
    // checkRow's messages start with the row's JSON path ($.valid: …)
    throw new QueueError(`job ${id}: $.row${(e as Error).message.replace(/^\$/, '')}`);
  }
  if (row.failure !== null) {
    const f = r.obj(row.failure, '$.row.failure');
    r.str(f.category, '$.row.failure.category', 10_000);
    r.str(f.detail, '$.row.failure.detail', LIMITS.gold);
    if (f.offset !== null) r.int(f.offset, '$.row.failure.offset', 0, LIMITS.gold);
  }
  if (row.gold_error !== null) r.str(row.gold_error, '$.row.gold_error', LIMITS.gold);
  if (!('answer' in row)) r.fail('$.row.answer', 'the executed answer or null', undefined);
  if (!('gold_answer' in row)) r.fail('$.row.gold_answer', "the gold program's answer or null", undefined);
  return { row: row as unknown as EvalRow, worker };
}

/** Checks the format record; returns it, or a description of what is there instead. */
export function readFormatRecord(text: string | null): FormatRecord | { other: string } | null {
  if (text === null) return null;
  if (text.length > 64 * 1024) return { other: `a ${text.length}-byte record that is not treewright's` };
  let v: unknown;
  try {
    v = JSON.parse(text);
  } catch {
    return { other: 'a record that is not JSON' };
  }
  if (!isObj(v) || v.format !== 'treewright-evaluation-queue') return { other: 'a record that is not a treewright evaluation queue' };
  if (v.version !== QUEUE_FORMAT_VERSION) return { other: `a treewright evaluation queue of format ${describe(v.version)}` };
  try {
    const r = new Reader('format record');
    return { format: 'treewright-evaluation-queue', version: QUEUE_FORMAT_VERSION, fp: readFingerprint(r, v.fp, '$.fp'), decoding: readDecoding(r, v.decoding, '$.decoding'), jobs: r.int(v.jobs, '$.jobs', 0, Number.MAX_SAFE_INTEGER) };
  } catch (e) {
    return { other: `a damaged treewright record (${(e as Error).message})` };
  }
}
