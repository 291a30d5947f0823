/**
 * Running the real CLI in the queue tests: spawn `treewright …`, read its stderr as it comes, wait
 * for a line, and the data the runs share (a coop database and a few lf items, as in
 * test/eval/cli-resume.test.ts).
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { buildSqliteFileFrom } from '../../src/exec/database.ts';

const CLI = resolve('src/cli/treewright.mjs');

export interface Running {
  readonly child: ChildProcess;
  stderr(): string;
  /** resolves when stderr matches (rejects after `ms` or when the process ends first) */
  waitFor(re: RegExp, ms: number): Promise<void>;
  readonly exit: Promise<{ code: number | null; signal: string | null; stderr: string }>;
}

export function run(args: readonly string[]): Running {
  const child = spawn(process.execPath, [CLI, ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
  let err = '';
  const waiters: { re: RegExp; resolve: () => void }[] = [];
  child.stderr!.on('data', (d: Buffer) => {
    err += d.toString();
    for (const w of [...waiters]) if (w.re.test(err)) (waiters.splice(waiters.indexOf(w), 1), w.resolve());
  });
  child.stdout!.resume();
  const exit = new Promise<{ code: number | null; signal: string | null; stderr: string }>((res) => child.on('exit', (code, signal) => res({ code, signal, stderr: err })));
  return {
    child,
    stderr: () => err,
    exit,
    waitFor(re, ms) {
      if (re.test(err)) return Promise.resolve();
      return new Promise<void>((res, rej) => {
        const t = setTimeout(() => rej(new Error(`no ${re} within ${ms} ms; stderr so far:\n${err}`)), ms);
        void exit.then(() => setTimeout(() => rej(new Error(`the process ended before ${re}; stderr:\n${err}`)), 50));
        waiters.push({ re, resolve: () => (clearTimeout(t), res()) });
      });
    },
  };
}

/** Builds the coop database and `n` items whose gold programs are the lf grammar's valid samples. */
export function makeData(dir: string, n: number): { db: string; data: string } {
  const db = join(dir, 'coop.sqlite');
  const data = join(dir, 'data.jsonl');
  buildSqliteFileFrom('grammars/sql/coop.sql', db);
  const programs = readFileSync('grammars/lf/samples/valid.lf', 'utf8').split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#'));
  writeFileSync(data, programs.slice(0, n).map((lf, i) => JSON.stringify({ id: `q${i}`, split: i % 3 === 2 ? 'dev' : 'test', question: `which ones, number ${i}?`, lf })).join('\n') + '\n');
  return { db, data };
}

/** Rows of results.jsonl without the timing fields, as sorted JSON texts (the order rows arrived in set aside). */
export function rowsWithoutTimes(out: string, sort = true): string[] {
  const p = join(out, 'results.jsonl');
  const lines = existsSync(p) ? readFileSync(p, 'utf8').split('\n').filter((l) => l !== '') : [];
  const got = lines.map((l) => {
    const r = JSON.parse(l) as Record<string, unknown>;
    for (const k of ['latency_ms', 'model_ms', 'mask_ms', 'mask_share']) delete r[k];
    return JSON.stringify(r);
  });
  return sort ? got.sort() : got;
}

/** metrics.json without the latency quantiles (the only figures that depend on the machine). */
export function metricsWithoutTimes(out: string): unknown {
  const m = JSON.parse(readFileSync(join(out, 'metrics.json'), 'utf8')) as Record<string, Record<string, Record<string, unknown>>>;
  for (const split of Object.values(m)) {
    for (const mode of ['unconstrained', 'constrained']) {
      delete split[mode].latency_ms_p50;
      delete split[mode].latency_ms_p95;
    }
  }
  return m;
}
