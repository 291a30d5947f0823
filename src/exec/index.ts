/**
 * exec/ — runs programs and returns their answers: the SQL executor (SQLite, read-only, in a
 * killable child process with a time limit and a row cap), the logical-form executor (a
 * model-theoretic evaluator over a closed-world fact base, with a step limit), the demo
 * cooperative that feeds both from one SQL script, and the loader for a user's own executor.
 *
 * Example:
 *   const { dbPath, facts } = buildCoop('grammars/sql/coop.sql', '.cache/coop.sqlite');
 *   const lf = lfExecutor(facts);
 *   await lf(parser.parse('lambda $x. grower($x) & lives_in($x, oakmere)'), {});
 *   // { ok: true, value: { type: 'set', members: ['celia_thorncombe', 'ilse_varrow', 'mara_feldwick'] } }
 *   const runner = new SqlRunner(dbPath, { timeoutMs: 2000, rowCap: 10000 });
 *   await sqlExecutor(runner, sqlGrammar)(tree, {});   // { ok: true, value: { columns, rows } }
 *
 * Worst-case cost: SQL — whatever SQLite needs, cut off at the time limit (the child process is
 * killed and restarted, ~100 ms); LF — at most `stepLimit` node visits (default 1,000,000, about
 * 0.1–0.3 s), then an error.
 * Limits: SQL runs one query at a time per runner; answers larger than the row cap are errors.
 * The LF fact base is built through the demo scenario's lexicon (lexicon.ts), so the shipped LF executor knows
 * the cooperative's schema only; other domains plug in their own executor module.
 *
 * A user's executor is an ES module exporting `execute(tree, context)` (contract in types.ts);
 * `treewright evaluate --executor path/to/module.mjs` loads it with loadExecutor.
 */
import { existsSync } from 'node:fs';
import { resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import type { ExecuteFn } from './types.ts';

export type { ExecContext, ExecResult, ExecuteFn, Tree } from './types.ts';
export { formatAnswer, formatResult } from './answer.ts';
export { SqlRunner, checkSelectTree, sqlExecutor, type SqlRunnerOptions } from './sql.ts';
export { evaluateLf, lfExecutor, kindProblem, DEFAULT_STEP_LIMIT, type LfAnswer, type LfOptions } from './lf.ts';
export { makeFactBase, factNames, type FactBase, type FactsInput } from './facts.ts';
export { buildCoop, factsFromDatabase, lfAgreesWithSql } from './coop.ts';
export { buildSqliteFile, buildSqliteFileFrom, databaseKind, openDatabaseFile, runSqlScript, type DatabaseFile } from './database.ts';

/** Loads a user's executor module; the error names the file and what it must export. */
export async function loadExecutor(path: string): Promise<ExecuteFn> {
  const file = resolve(path);
  if (!existsSync(file)) throw new Error(`${path}: no such file (expected an ES module exporting execute(tree, context))`);
  const mod = (await import(pathToFileURL(file).href)) as { execute?: unknown; default?: { execute?: unknown } };
  const fn = mod.execute ?? mod.default?.execute;
  if (typeof fn !== 'function') throw new Error(`${path}: expected the module to export a function named "execute" (tree, context) => Promise<{ ok, value | error }>`);
  return async (tree, context) => {
    try {
      const r = (await (fn as ExecuteFn)(tree, context)) as unknown;
      if (r && typeof r === 'object' && 'ok' in r) return r as Awaited<ReturnType<ExecuteFn>>;
      return { ok: false, error: `${path}: execute returned ${JSON.stringify(r)?.slice(0, 80)}, expected { ok: true, value } or { ok: false, error }` };
    } catch (err) {
      return { ok: false, error: `${path}: execute threw (a bug in the executor): ${(err as Error).message}` };
    }
  };
}
