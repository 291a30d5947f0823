/**
 * One evaluation run on disk: reads the data file, continues the results log in the output
 * folder, and writes metrics.json, taxonomy.json and report.html from every row of this run's
 * items (rows of the same log for other items, e.g. from an earlier run with another --limit, are
 * kept in results.jsonl but left out of the figures).
 */
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { ResultsLog, rowKey } from './log.ts';
import { computeMetrics, computeTaxonomy, type Metrics } from './metrics.ts';
import { writeReport } from './report.ts';
import { checkRow, jobsOf, runEvaluation, type DecodeFn, type EvalItem, type EvalRow, type Job, type RowMaker, type Scorer } from './run.ts';
import { lockOutDir } from './lock.ts';

export interface LoadItemsOptions {
  /** the field holding the gold program (default: the grammar's name, e.g. "sql" or "lf") */
  readonly goldField: string;
  readonly split?: string;
  readonly limit?: number;
}

/**
 * Reads a JSONL data file of `{id, split, question, <goldField>, ...}` rows; errors name the file,
 * line and JSON path. `--split` keeps one split; `--limit` keeps the first N items after that.
 */
export function loadItems(file: string, opts: LoadItemsOptions): EvalItem[] {
  if (!existsSync(file)) throw new Error(`${file}: no such file (expected JSONL rows {id, split, question, ${opts.goldField}})`);
  const lines = readFileSync(file, 'utf8').split('\n');
  const items: EvalItem[] = [];
  const seen = new Set<string>();
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i];
    if (line.trim() === '') continue;
    const where = `${file}:${i + 1}:1`;
    let row: Record<string, unknown>;
    try {
      row = JSON.parse(line) as Record<string, unknown>;
    } catch (err) {
      throw new Error(`${where}: expected one JSON object per line (${(err as Error).message})`);
    }
    if (row === null || typeof row !== 'object' || Array.isArray(row)) throw new Error(`${where}: expected a JSON object`);
    const need = (key: string, types: string[]) => {
      if (!types.includes(typeof row[key])) throw new Error(`${where}: $.${key}: expected ${types.join(' or ')}, found ${JSON.stringify(row[key]) ?? 'nothing'}`);
    };
    need('id', ['string', 'number']);
    need('split', ['string']);
    need('question', ['string']);
    need(opts.goldField, ['string']);
    const id = String(row.id);
    if (seen.has(id)) throw new Error(`${where}: $.id: ${JSON.stringify(id)} appears twice; expected unique ids`);
    seen.add(id);
    if (opts.split !== undefined && row.split !== opts.split) continue;
    items.push({ id, split: row.split as string, question: row.question as string, gold: row[opts.goldField] as string });
    if (opts.limit !== undefined && items.length >= opts.limit) break;
  }
  return items;
}

/**
 * Something that turns jobs into rows elsewhere than in this loop: local worker processes
 * (pool.ts) or workers pulling from a Redis queue (src/queue/). Rows may come in any order;
 * `emit` writes each one to results.jsonl at once.
 */
export interface RowProducer {
  /** makes one row per job and calls `emit` with each; resolves when every job has its row */
  produce(jobs: readonly Job[], emit: (row: EvalRow) => void): Promise<void>;
}

/** A RowProducer making the rows in this process, one after another, in the jobs' order. */
export function inProcess(maker: RowMaker): RowProducer {
  return {
    async produce(jobs, emit) {
      for (const j of jobs) emit(await maker.row(j.item, j.mode));
    },
  };
}

export interface EvaluateOptions {
  readonly items: readonly EvalItem[];
  /** decoding and scoring in this process (used when no producer is given) */
  readonly decode?: DecodeFn;
  readonly scorer?: Scorer;
  /** makes the rows elsewhere (decode and scorer are then unused) */
  readonly producer?: RowProducer;
  readonly outDir: string;
  /** shown at the top of the report */
  readonly meta: Readonly<Record<string, string>>;
  readonly onStart?: (done: number, total: number) => void;
  readonly onRow?: (row: EvalRow, done: number, total: number) => void;
}

export interface EvaluateResult {
  readonly written: number;
  readonly resumed: number;
  readonly repairedBytes: number;
  readonly metrics: Metrics;
  readonly rows: readonly EvalRow[];
}

/**
 * Runs (or continues) an evaluation into `outDir`. Metrics, taxonomy and report read the rows in
 * the data's order (item by item, unconstrained then constrained), whatever order they were
 * written in, so a run by several workers gives the same figures as a run by one. Holds an
 * exclusive lock on `outDir` while it runs (OutDirLocked when another run holds it).
 */
export async function evaluate(opts: EvaluateOptions): Promise<EvaluateResult> {
  mkdirSync(opts.outDir, { recursive: true });
  // one run per folder: a second run fails here instead of interleaving rows (lock.ts)
  const unlock = lockOutDir(opts.outDir);
  try {
    return await evaluateLocked(opts);
  } finally {
    unlock();
  }
}

async function evaluateLocked(opts: EvaluateOptions): Promise<EvaluateResult> {
  const log = new ResultsLog<EvalRow>(join(opts.outDir, 'results.jsonl'), checkRow);
  const jobs = jobsOf(opts.items);
  const keys = new Set(jobs.map((j) => rowKey({ id: j.item.id, mode: j.mode })));
  const resumed = log.rows.filter((r) => keys.has(rowKey(r))).length;
  opts.onStart?.(resumed, keys.size);
  let written = 0;
  try {
    if (opts.producer !== undefined) {
      const pending = jobs.filter((j) => !log.has(j.item.id, j.mode));
      const wanted = new Set(pending.map((j) => rowKey({ id: j.item.id, mode: j.mode })));
      let done = resumed;
      await opts.producer.produce(pending, (row) => {
        // a row for another job, or one already written, is dropped (a producer may deliver twice)
        if (!wanted.has(rowKey(row)) || log.has(row.id, row.mode)) return;
        log.append(row);
        written++;
        done++;
        opts.onRow?.(row, done, keys.size);
      });
    } else {
      if (opts.decode === undefined || opts.scorer === undefined) throw new Error('evaluate: expected decode and scorer, or a producer');
      written = await runEvaluation({ items: opts.items, decode: opts.decode, scorer: opts.scorer, log, onRow: opts.onRow });
    }
  } finally {
    log.close();
  }
  const byKey = new Map(log.rows.map((r) => [rowKey(r), r]));
  const rows = jobs.map((j) => byKey.get(rowKey({ id: j.item.id, mode: j.mode }))).filter((r): r is EvalRow => r !== undefined);
  const metrics = computeMetrics(rows);
  const taxonomy = computeTaxonomy(rows);
  writeFileSync(join(opts.outDir, 'metrics.json'), JSON.stringify(metrics, null, 2) + '\n');
  writeFileSync(join(opts.outDir, 'taxonomy.json'), JSON.stringify(taxonomy, null, 2) + '\n');
  writeReport(join(opts.outDir, 'report.html'), { meta: opts.meta, metrics, taxonomy, rows });
  return { written, resumed, repairedBytes: log.repairedBytes, metrics, rows };
}
