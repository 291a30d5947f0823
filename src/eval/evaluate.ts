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
import { checkRow, MODES, runEvaluation, type DecodeFn, type EvalItem, type EvalRow, type Scorer } from './run.ts';

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

export interface EvaluateOptions {
  readonly items: readonly EvalItem[];
  readonly decode: DecodeFn;
  readonly scorer: Scorer;
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

export async function evaluate(opts: EvaluateOptions): Promise<EvaluateResult> {
  mkdirSync(opts.outDir, { recursive: true });
  const log = new ResultsLog<EvalRow>(join(opts.outDir, 'results.jsonl'), checkRow);
  const keys = new Set(opts.items.flatMap((it) => MODES.map((mode) => rowKey({ id: it.id, mode }))));
  const resumed = log.rows.filter((r) => keys.has(rowKey(r))).length;
  opts.onStart?.(resumed, keys.size);
  let written: number;
  try {
    written = await runEvaluation({ items: opts.items, decode: opts.decode, scorer: opts.scorer, log, onRow: opts.onRow });
  } finally {
    log.close();
  }
  const rows = log.rows.filter((r) => keys.has(rowKey(r)));
  const metrics = computeMetrics(rows);
  const taxonomy = computeTaxonomy(rows);
  writeFileSync(join(opts.outDir, 'metrics.json'), JSON.stringify(metrics, null, 2) + '\n');
  writeFileSync(join(opts.outDir, 'taxonomy.json'), JSON.stringify(taxonomy, null, 2) + '\n');
  writeReport(join(opts.outDir, 'report.html'), { meta: opts.meta, metrics, taxonomy, rows });
  return { written, resumed, repairedBytes: log.repairedBytes, metrics, rows };
}
