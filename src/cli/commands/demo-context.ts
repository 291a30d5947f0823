/**
 * What the sections of `treewright demo` share (the tour in demo.ts, the model part in
 * demo-model.ts): kept apart so neither file imports the other's types.
 */
import type { Grammar, NameBindings } from '../../description/ir.ts';

/** What every section may use. Built once by runDemo. */
export interface DemoContext {
  /** the four shipped grammars by name (sql, lf, json, arith) */
  readonly grammars: ReadonlyMap<string, Grammar>;
  /** path of the demo database (built from grammars/sql/coop.sql into a temporary folder) */
  readonly database: string;
  /** names bound from the demo database: every table and every column */
  readonly sqlNames: NameBindings;
  /** table → its columns, for sampling with consistent names */
  readonly schema: ReadonlyMap<string, readonly string[]>;
  /** names for the other grammars (grammars/G/samples/names.json) */
  readonly names: ReadonlyMap<string, NameBindings>;
}

export interface DemoSection {
  readonly title: string;
  run(ctx: DemoContext, out: (line: string) => void): void | Promise<void>;
}
