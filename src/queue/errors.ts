/**
 * The queue stage's error catalogue: one factory per condition. A message starts with what it is
 * about (the option, the Redis URL with the password hidden, or the job and a JSON path), says what
 * was found and what was expected, and ends with a hint.
 */
import type { Fingerprint } from './fingerprint.ts';

export class QueueError extends Error {
  override readonly name = 'QueueError';
}

const short = (h: string) => h.slice(0, 12);

export const queueErrors = {
  unreachable: (url: string, why: string) =>
    new QueueError(`--queue ${url}: cannot reach Redis (${why}); expected a Redis server (5.0 or later) listening there — start one with \`redis-server --port PORT\`, or check the host, port and password`),
  oldRedis: (url: string, version: string) => new QueueError(`--queue ${url}: Redis ${version}; expected Redis 5.0 or later (the queue library's Lua scripts need it)`),
  lost: (url: string, why: string) =>
    new QueueError(`--queue ${url}: lost the connection to Redis (${why}) and could not get it back; the rows written so far are kept — run the same command again once Redis is back`),
  otherFormat: (url: string, name: string, found: string) =>
    new QueueError(
      `--queue ${url}: queue ${JSON.stringify(name)} holds ${found}; expected a treewright evaluation queue of format ${QUEUE_FORMAT_VERSION} — ` +
        `use another --queue-name, or let the treewright version that made it finish`,
    ),
  inUse: (url: string, name: string, pending: number, parts: readonly string[]) =>
    new QueueError(
      `--queue ${url}: queue ${JSON.stringify(name)} still has ${pending} unfinished jobs of another evaluation (its ${parts.join(', ')} differ from this one's); ` +
        `expected an idle queue — use another --queue-name, or finish that evaluation first`,
    ),
  /** `subject`: "job <id>:", or the queue whose format record names another set-up */
  mismatch: (subject: string, parts: readonly (keyof Fingerprint)[], want: Fingerprint, have: Partial<Fingerprint>) =>
    new QueueError(
      `${subject} made for another set-up — ${parts.map((p) => `${p} ${short(want[p])}… here ${have[p] === undefined ? '?' : short(have[p]!)}…`).join(', ')}; ` +
        `this worker refuses it; expected this worker's --model, --grammar, --names and --db (or --executor) to be the evaluation's: start the worker with the same files`,
    ),
  badJob: (jobId: string, path: string, expected: string, found: unknown) =>
    new QueueError(`job ${jobId}: ${path}: expected ${expected}, found ${describe(found)}`),
  failed: (id: string, mode: string, reason: string) =>
    new QueueError(`item ${JSON.stringify(id)} (${mode}) failed on the workers: ${reason}; the rows written so far are kept — fix the cause and run the same command again`),
};

/** The version of the job and row formats; a queue made by another format is refused. */
export const QUEUE_FORMAT_VERSION = 1;

/** A short description of a value found where another was expected (never the whole value). */
export function describe(v: unknown): string {
  if (v === undefined) return 'nothing';
  let s: string;
  try {
    s = JSON.stringify(v) ?? String(v);
  } catch {
    s = String(v);
  }
  return s.length > 60 ? `${s.slice(0, 60)}… (${s.length} characters)` : s;
}
