/**
 * The evaluation loop: decode every item twice (unconstrained, then constrained), score each
 * output, and append one row per item and mode to the results log as soon as it is produced.
 *
 * Scoring an output (all in the grammar's own terms, see Scorer). The five measures carry the same
 * names in every row of results.jsonl, in metrics.json, in the report and in README:
 * - valid: the text is a program of the grammar (the parser accepts it);
 * - well_typed: its tree also passes the tree check with the bound names (known names, bound
 *   variables);
 * - executable: the executor ran the tree without error;
 * - exact_match: the tree equals the gold tree (JSON equality of trees, not of strings);
 * - execution_accuracy: the executed answer equals the gold program's answer (Scorer.sameAnswer).
 * The first thing that went wrong is kept as `failure` (a category for the taxonomy, the detail,
 * and the offset of the first bad character in the text when there is one).
 *
 * Resuming: rows already in the log (key id + mode) are skipped, so a killed run started again
 * produces exactly the missing rows. Gold programs are parsed and executed once per item. A log
 * written before the measures got their present names (`parses`, `executes`, `denotation_match`)
 * is refused by checkRow rather than read: continuing it would leave one file with two names for
 * each measure.
 */
import { performance } from 'node:perf_hooks';
import type { ExecResult, Tree } from '../exec/types.ts';
import type { ResultsLog } from './log.ts';

export type Mode = 'unconstrained' | 'constrained';
export const MODES: readonly Mode[] = ['unconstrained', 'constrained'];

export interface EvalItem {
  readonly id: string;
  readonly split: string;
  readonly question: string;
  /** the gold program's text in the evaluated grammar */
  readonly gold: string;
}

/** What a decoder returns for one item and mode. */
export interface DecodeOutput {
  readonly text: string;
  /** generated tokens (without the end-of-sequence token) */
  readonly tokens: number;
  readonly model_ms: number;
  readonly mask_ms: number;
  /** true when decoding stopped at the length limit rather than at end-of-sequence */
  readonly truncated: boolean;
  /** each generated token's text, when the decoder knows them (the report marks the bad token) */
  readonly token_texts?: readonly string[];
}

export type DecodeFn = (item: EvalItem, mode: Mode) => Promise<DecodeOutput>;

export interface Failure {
  /** taxonomy key: `expected …`, `truncated at max length`, `unknown name`, `unbound variable`, `runtime error: …` */
  readonly category: string;
  readonly detail: string;
  /** UTF-16 offset of the first bad character of the text, when the failure has one */
  readonly offset: number | null;
}

export interface Analysis {
  /** the text is a program of the grammar */
  readonly valid: boolean;
  readonly well_typed: boolean;
  /** the tree when the text parses (even when it is not well-typed) */
  readonly tree: Tree | null;
  /** null exactly when valid and well_typed */
  readonly failure: Failure | null;
}

/** The grammar-specific half of scoring (see target.ts for the shipped one). */
export interface Scorer {
  /** parse and check one text, with `truncated` telling whether decoding hit the length limit */
  analyse(text: string, truncated: boolean): Analysis;
  execute(tree: Tree): Promise<ExecResult>;
  /** whether an answer equals the gold answer (the gold tree tells e.g. whether order matters) */
  sameAnswer(gold: unknown, got: unknown, goldTree: Tree): boolean;
}

export interface EvalRow {
  readonly id: string;
  readonly split: string;
  readonly mode: Mode;
  readonly question: string;
  readonly gold: string;
  readonly text: string;
  readonly tokens: number;
  readonly latency_ms: number;
  readonly model_ms: number;
  readonly mask_ms: number;
  /** mask_ms / latency_ms */
  readonly mask_share: number;
  readonly truncated: boolean;
  /** the generated tokens' texts, or null when the decoder did not give them */
  readonly token_texts: readonly string[] | null;
  readonly valid: boolean;
  readonly well_typed: boolean;
  readonly executable: boolean;
  readonly exact_match: boolean;
  readonly execution_accuracy: boolean;
  readonly failure: Failure | null;
  readonly answer: unknown;
  readonly gold_answer: unknown;
  /** set when the gold program itself did not parse or run (a dataset problem) */
  readonly gold_error: string | null;
}

export interface RunOptions {
  readonly items: readonly EvalItem[];
  readonly decode: DecodeFn;
  readonly scorer: Scorer;
  readonly log: ResultsLog<EvalRow>;
  readonly modes?: readonly Mode[];
  /** called after each row is written (progress display) */
  readonly onRow?: (row: EvalRow, done: number, total: number) => void;
}

/** Names of the five measures in rows, metrics.json, the report and README. */
export const MEASURES = ['valid', 'well_typed', 'executable', 'exact_match', 'execution_accuracy'] as const;

/** Fields of rows written by earlier versions, with their present names. */
const RENAMED: Readonly<Record<string, string>> = { parses: 'valid', executes: 'executable', denotation_match: 'execution_accuracy' };

/**
 * Checks a row read back from results.jsonl before a run continues it: no field under an old
 * name, and every measure true or false. Throws an Error naming the field (a JSON path).
 */
export function checkRow(row: Readonly<Record<string, unknown>>): void {
  for (const [old, now] of Object.entries(RENAMED)) {
    if (Object.prototype.hasOwnProperty.call(row, old)) {
      throw new Error(
        `$.${old}: the old name of the measure ${JSON.stringify(now)} (this file was written by an earlier treewright); ` +
          `expected the fields ${MEASURES.slice(0, -1).join(', ')} and ${MEASURES[MEASURES.length - 1]}. Evaluate into a new --out folder, ` +
          `or rename the fields in this file (${Object.entries(RENAMED).map(([o, n]) => `${o} → ${n}`).join(', ')}) and run again`,
      );
    }
  }
  for (const m of MEASURES) {
    if (typeof row[m] !== 'boolean') throw new Error(`$.${m}: expected true or false, found ${JSON.stringify(row[m]) ?? 'nothing'}`);
  }
}

/** JSON equality of two trees (field order ignored). */
export function sameTree(a: unknown, b: unknown): boolean {
  if (a === b) return true;
  if (typeof a !== typeof b || a === null || b === null || typeof a !== 'object') return false;
  if (Array.isArray(a)) {
    if (!Array.isArray(b) || a.length !== b.length) return false;
    for (let i = 0; i < a.length; i++) if (!sameTree(a[i], b[i])) return false;
    return true;
  }
  if (Array.isArray(b)) return false;
  const ka = Object.keys(a as object);
  const kb = Object.keys(b as object);
  if (ka.length !== kb.length) return false;
  for (const k of ka) {
    if (!Object.prototype.hasOwnProperty.call(b, k)) return false;
    if (!sameTree((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k])) return false;
  }
  return true;
}

/** A runtime error message turned into a taxonomy category: paths and specific names dropped. */
export function runtimeCategory(message: string): string {
  let m = message.replace(/ \(at \$[^)]*\)$/, '');
  // keep "what: kind" of "what: kind: specifics" (SQLite's "no such column: x")
  const parts = m.split(': ');
  if (parts.length > 2) m = parts.slice(0, 2).join(': ');
  m = m.replace(/ for [A-Za-z0-9_#]+$/, ' for an entity').replace(/\d+/g, 'N');
  return `runtime error: ${m}`;
}

interface GoldInfo {
  readonly tree: Tree | null;
  readonly answer: unknown;
  readonly error: string | null;
}

/** One unit of work: an item decoded in one mode (one row of results.jsonl). */
export interface Job {
  readonly item: EvalItem;
  readonly mode: Mode;
}

/**
 * Produces rows from jobs: decodes, scores and executes one item in one mode at a time. The gold
 * program of an item is parsed and executed once and kept for the item's other mode (the last
 * few items are remembered, so jobs of one item that arrive close together share the work).
 * Every way of running an evaluation — this process, local worker processes, queue workers —
 * makes its rows with a RowMaker, so the rows are the same whichever runs them.
 */
export class RowMaker {
  private readonly gold = new Map<string, Promise<GoldInfo>>();
  private static readonly KEEP = 8;

  constructor(
    private readonly decode: DecodeFn,
    private readonly scorer: Scorer,
  ) {}

  async row(item: EvalItem, mode: Mode): Promise<EvalRow> {
    let gold = this.gold.get(item.id);
    if (gold === undefined) {
      gold = scoreGold(this.scorer, item);
      this.gold.set(item.id, gold);
      if (this.gold.size > RowMaker.KEEP) this.gold.delete(this.gold.keys().next().value as string);
    }
    return scoreOne(this.decode, this.scorer, item, mode, await gold);
  }
}

/** The jobs of `items` × `modes` in order (item by item, modes in the given order). */
export function jobsOf(items: readonly EvalItem[], modes: readonly Mode[] = MODES): Job[] {
  return items.flatMap((item) => modes.map((mode) => ({ item, mode })));
}

/** Runs the evaluation; rows already in the log are skipped. Returns the number of rows written. */
export async function runEvaluation(opts: RunOptions): Promise<number> {
  const modes = opts.modes ?? MODES;
  const total = opts.items.length * modes.length;
  let done = 0;
  for (const item of opts.items) for (const mode of modes) if (opts.log.has(item.id, mode)) done++;
  let written = 0;
  const maker = new RowMaker(opts.decode, opts.scorer);
  for (const { item, mode } of jobsOf(opts.items, modes)) {
    if (opts.log.has(item.id, mode)) continue;
    const row = await maker.row(item, mode);
    opts.log.append(row);
    written++;
    done++;
    opts.onRow?.(row, done, total);
  }
  return written;
}

async function scoreGold(scorer: Scorer, item: EvalItem): Promise<GoldInfo> {
  const a = scorer.analyse(item.gold, false);
  if (!a.valid || !a.well_typed || a.tree === null) {
    return { tree: a.tree, answer: null, error: `the gold program of ${item.id} is not valid: ${a.failure?.detail ?? 'unknown problem'}` };
  }
  const r = await scorer.execute(a.tree);
  if (!r.ok) return { tree: a.tree, answer: null, error: `the gold program of ${item.id} does not run: ${r.error}` };
  return { tree: a.tree, answer: r.value, error: null };
}

async function scoreOne(decode: DecodeFn, scorer: Scorer, item: EvalItem, mode: Mode, gold: GoldInfo): Promise<EvalRow> {
  const t0 = performance.now();
  const out = await decode(item, mode);
  const latency = performance.now() - t0;
  const a = scorer.analyse(out.text, out.truncated);
  let executable = false;
  let answer: unknown = null;
  let failure = a.failure;
  if (a.valid && a.well_typed && a.tree !== null) {
    const r = await scorer.execute(a.tree);
    if (r.ok) {
      executable = true;
      answer = r.value;
    } else {
      failure = { category: runtimeCategory(r.error), detail: r.error, offset: null };
    }
  }
  const exact = a.tree !== null && gold.tree !== null && a.well_typed && sameTree(a.tree, gold.tree);
  const accurate = executable && gold.error === null && gold.tree !== null && scorer.sameAnswer(gold.answer, answer, gold.tree);
  return {
    id: item.id,
    split: item.split,
    mode,
    question: item.question,
    gold: item.gold,
    text: out.text,
    tokens: out.tokens,
    latency_ms: round3(latency),
    model_ms: round3(out.model_ms),
    mask_ms: round3(out.mask_ms),
    mask_share: latency > 0 ? round3(out.mask_ms / latency) : 0,
    truncated: out.truncated,
    token_texts: out.token_texts ?? null,
    valid: a.valid,
    well_typed: a.valid && a.well_typed,
    executable,
    exact_match: exact,
    execution_accuracy: accurate,
    failure,
    answer,
    gold_answer: gold.answer,
    gold_error: gold.error,
  };
}

function round3(x: number): number {
  return Math.round(x * 1000) / 1000;
}
