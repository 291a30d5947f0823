/**
 * The executor interface: how treewright runs a tree of some grammar and gets an answer back.
 *
 * An executor is an ES module that exports one function:
 *
 * ```ts
 * export async function execute(tree: Tree, context: ExecContext): Promise<ExecResult>
 * ```
 *
 * - `tree` is a JSON tree of the grammar (see README "JSON trees"), already parsed and checked
 *   against the grammar and its bound names. An executor must not mutate it.
 * - `context` carries what the run knows: the grammar, the path of the database (`--db`), the
 *   per-call time limit and row cap the user asked for. Executors ignore what they do not need.
 * - The result is `{ ok: true, value }` with a JSON-serialisable value, or
 *   `{ ok: false, error }` with a one-line message that says what went wrong. An executor never
 *   throws for a bad program; a throw is treated as a bug in the executor and reported as such.
 *
 * Two executors ship: `sql.ts` (SQLite, read-only, time-limited) and `lf.ts` (logical forms over
 * a closed-world fact base). `loadExecutor(path)` in index.ts loads a user's module.
 */
import type { Grammar } from '../description/ir.ts';
import type { Tree } from '../tree/index.ts';

/** A JSON tree node: `{ kind: "ctor", field: value, ... }` (the tree stage's one `Tree` type). */
export type { Tree };

export interface ExecContext {
  readonly grammar?: Grammar;
  /** SQLite database file (`--db`); the SQL executor opens it read-only */
  readonly db?: string;
  /** per-call wall-clock limit in milliseconds */
  readonly timeoutMs?: number;
  /** the most rows (SQL) or set members a result may hold */
  readonly rowCap?: number;
}

export type ExecResult =
  | { readonly ok: true; readonly value: unknown }
  | { readonly ok: false; readonly error: string };

/** The one function an executor module exports. */
export type ExecuteFn = (tree: Tree, context: ExecContext) => Promise<ExecResult>;
