/**
 * The SQL executor: runs a tree of the `sql` grammar against a SQLite file opened read-only, in a
 * child process that is killed when a query passes its time limit.
 *
 * Defences, outermost first:
 * 1. the tree's root must be a `select` node (checked on the tree, not on text);
 * 2. the text is the canonical print of that tree (one statement; better-sqlite3 also refuses
 *    more than one statement in a prepare);
 * 3. the statement must be a reader and read-only as SQLite itself classifies it;
 * 4. the database connection is opened `{ readonly: true, fileMustExist: true }`;
 * 5. the statement's bytecode (EXPLAIN) opens only the bound tables (default: every table that is
 *    not SQLite's own) and their indexes — no schema table, no virtual table or pragma function,
 *    no `sqlite_…()` introspection function (sql-child.mjs).
 *
 * Cost: starting the child costs one process start (~50–100 ms, once, and again after a kill);
 * a query costs an IPC round trip plus SQLite's own time. Queries run one at a time per runner.
 * Limits: `timeoutMs` (default 2000), `rowCap` (default 10000 rows) and `byteCap` (default 8 MiB):
 * more is an error, never a silent truncation, so a capped answer cannot be mistaken for a right
 * one. The child's JavaScript heap is limited to 256 MB.
 */
import { fork, type ChildProcess } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import type { Grammar } from '../description/ir.ts';
import { printTree } from '../tree/index.ts';
import type { ExecResult, ExecuteFn, Tree } from './types.ts';

const CHILD = fileURLToPath(new URL('./sql-child.mjs', import.meta.url));

export interface SqlRows {
  readonly columns: readonly string[];
  readonly rows: readonly (readonly unknown[])[];
}

export interface SqlRunnerOptions {
  readonly timeoutMs?: number;
  readonly rowCap?: number;
  /** largest answer in bytes (values as JSON text, roughly; default 8 MiB) */
  readonly byteCap?: number;
  /** tables a query may read (default: every table that is not SQLite's own) */
  readonly tables?: readonly string[];
}

interface Pending {
  readonly id: number;
  readonly resolve: (r: ExecResult) => void;
  readonly timer: NodeJS.Timeout;
}

/**
 * Runs SQL text against one read-only database file. Callers normally go through `executeSql`
 * (tree in); `run` takes text and is meant for trusted text (tests, tooling). Queries are queued
 * and run one at a time.
 */
export class SqlRunner {
  readonly dbPath: string;
  readonly timeoutMs: number;
  readonly rowCap: number;
  readonly byteCap: number;
  readonly tables: readonly string[] | null;
  private child: ChildProcess | null = null;
  private ready: Promise<string | null> | null = null;
  private pending: Pending | null = null;
  private queue: Promise<unknown> = Promise.resolve();
  private nextId = 1;
  /** how many times a child was killed for passing the time limit */
  kills = 0;

  constructor(dbPath: string, options: SqlRunnerOptions = {}) {
    this.dbPath = dbPath;
    this.timeoutMs = options.timeoutMs ?? 2000;
    this.rowCap = options.rowCap ?? 10000;
    this.byteCap = options.byteCap ?? 8 * 1024 * 1024;
    this.tables = options.tables ?? null;
  }

  /** Runs one statement; resolves with rows as arrays, or a one-line error. Never rejects. */
  run(sql: string): Promise<ExecResult> {
    const next = this.queue.then(() => this.runNow(sql));
    this.queue = next.catch(() => undefined);
    return next;
  }

  /** Stops the child process (if any). The runner may still be used afterwards: it restarts. */
  close(): void {
    if (this.child) {
      this.child.kill('SIGKILL');
      this.child = null;
      this.ready = null;
    }
  }

  private start(): Promise<string | null> {
    if (this.ready) return this.ready;
    const args = this.tables === null ? [this.dbPath] : [this.dbPath, JSON.stringify(this.tables)];
    // the child's heap is bounded too: a huge value built inside a query ends the child, not the server
    const child = fork(CHILD, args, { execArgv: ['--max-old-space-size=256'], stdio: ['ignore', 'ignore', 'pipe', 'ipc'] });
    this.child = child;
    let stderr = '';
    child.stderr?.on('data', (d: Buffer) => {
      if (stderr.length < 4000) stderr += d.toString();
    });
    this.ready = new Promise((resolve) => {
      const onMessage = (msg: { ready?: boolean; fatal?: string }) => {
        if (msg.ready) resolve(null);
        else if (msg.fatal) resolve(msg.fatal);
      };
      child.once('message', onMessage);
      child.once('exit', (code, signal) => {
        resolve(`the SQL process ended before it was ready (${signal ?? `exit ${code}`}) ${stderr.trim()}`.trim());
      });
    });
    child.on('message', (msg: { id?: number; ok?: boolean; columns?: string[]; rows?: unknown[][]; error?: string }) => {
      const p = this.pending;
      if (!p || msg.id !== p.id) return;
      this.finish(msg.ok ? { ok: true, value: { columns: msg.columns, rows: msg.rows } } : { ok: false, error: msg.error ?? 'unknown error' });
    });
    child.on('exit', (code, signal) => {
      if (this.child === child) {
        this.child = null;
        this.ready = null;
      }
      if (this.pending) this.finish({ ok: false, error: `the SQL process ended unexpectedly (${signal ?? `exit ${code}`})` });
    });
    child.unref();
    (child.channel as { unref?: () => void } | undefined)?.unref?.();
    return this.ready;
  }

  private finish(result: ExecResult): void {
    const p = this.pending;
    if (!p) return;
    this.pending = null;
    clearTimeout(p.timer);
    (this.child?.channel as { unref?: () => void } | undefined)?.unref?.();
    p.resolve(result);
  }

  private async runNow(sql: string): Promise<ExecResult> {
    const fatal = await this.start();
    if (fatal) {
      this.close();
      return { ok: false, error: fatal };
    }
    const child = this.child!;
    (child.channel as { ref?: () => void } | undefined)?.ref?.();
    const id = this.nextId++;
    return new Promise<ExecResult>((resolve) => {
      const timer = setTimeout(() => {
        this.kills++;
        this.finish({ ok: false, error: `the query ran longer than ${this.timeoutMs} ms and was stopped (time limit)` });
        if (this.child === child) {
          this.child = null;
          this.ready = null;
        }
        child.kill('SIGKILL');
      }, this.timeoutMs);
      this.pending = { id, resolve, timer };
      child.send({ id, sql, rowCap: this.rowCap, byteCap: this.byteCap });
    });
  }
}

/**
 * Checks, on the tree, that it is one SELECT statement of the `sql` grammar. Returns an error
 * message, or null when the tree may run.
 */
export function checkSelectTree(tree: Tree): string | null {
  if (tree === null || typeof tree !== 'object' || typeof tree.kind !== 'string') {
    return 'the program is not a tree (expected a JSON object with a "kind")';
  }
  if (tree.kind !== 'select' && tree.kind !== 'grouped') {
    return `only a single SELECT may run, but the tree's root is "${tree.kind}" (at $.kind; expected "select" or "grouped")`;
  }
  return null;
}

/**
 * An executor (see types.ts) for trees of the `sql` grammar: checks the root, prints the tree
 * canonically and runs the text on `runner`. Rows come back as `{ columns, rows }`.
 */
export function sqlExecutor(runner: SqlRunner, grammar: Grammar): ExecuteFn {
  return async (tree: Tree): Promise<ExecResult> => {
    const problem = checkSelectTree(tree);
    if (problem) return { ok: false, error: problem };
    let text: string;
    try {
      text = printTree(grammar, tree);
    } catch (err) {
      return { ok: false, error: `the tree cannot be printed as SQL: ${(err as Error).message}` };
    }
    return runner.run(text);
  };
}
