/**
 * eval/ — measures what the validity guarantee buys and costs: decodes every item of a data file
 * twice (unconstrained, constrained), scores each output in the grammar's own terms, and writes
 * results.jsonl (resumable), metrics.json (rates with 95% Wilson score intervals, differences
 * between the modes with 95% paired-bootstrap intervals, McNemar's exact test, latency p50/p95), taxonomy.json (where invalid outputs first went wrong) and report.html
 * (self-contained, charts inlined).
 *
 * Example:
 *   const scorer = createScorer({ grammar, names, execute: lfExecutor(facts) });
 *   const items = loadItems('models/coop/data/test.jsonl', { goldField: 'lf', limit: 50 });
 *   await evaluate({ items, decode, scorer, outDir: 'out', meta: { model: 'models/coop' } });
 *   // out/metrics.json: {"test": {"unconstrained": {"valid": {"rate": 0.9, "ci_low": 0.82, ...}, ...},
 *   //                             "constrained": {...}, "mcnemar_p": {"exact_match": 0.03, ...}}}
 *
 * Worst-case cost: per item two decodes (the model's time dominates), two parses (ohm, a few ms)
 * and up to three executions (gold once, each output once; bounded by the executors' limits);
 * one fsync per row. Metrics: 2000 bootstrap resamples × n draws per split (the five differences
 * share the resamples), well under a second for a few thousand items. The report is ~250 KB plus ~1 KB per example.
 * Who decodes: this process (inProcess), N local child processes (pool.ts), or workers on other
 * machines through Redis (src/queue/); the rows and metrics are the same whichever does.
 * Limits: one decode at a time per process (no batching); the latency recorded is the wall-clock time of the
 * decode call on a machine that may be shared; the taxonomy keys on the parser's first error, so
 * an output with several faults is counted once, where it first went wrong.
 */
export { runEvaluation, RowMaker, jobsOf, type Job, sameTree, runtimeCategory, checkRow, MEASURES, MODES, type DecodeFn, type DecodeOutput, type EvalItem, type EvalRow, type Failure, type Mode, type Scorer, type Analysis } from './run.ts';
export { ResultsLog, rowKey } from './log.ts';
export { computeMetrics, computeTaxonomy, RATE_METRICS, type Metrics, type ModeMetrics, type FailureCounts, type SplitMetrics, type TaxonomyEntry } from './metrics.ts';
export { wilsonInterval, wilsonRate, pairedBootstrapDifferences, mcnemarExact, mcnemarPaired, quantile, BOOTSTRAP_RESAMPLES, BOOTSTRAP_SEED, Z_95, type RateCI, type DifferenceCI } from './stats.ts';
export { renderReport, writeReport, type ReportInput } from './report.ts';
export { resultsTable, type TableInput } from './table.ts';
export { createScorer, sameAnswer, type ScorerOptions } from './target.ts';
export { processPool, serveJobs, type PoolOptions } from './pool.ts';
export { evaluate, inProcess, loadItems, type RowProducer, type EvaluateOptions, type EvaluateResult, type LoadItemsOptions } from './evaluate.ts';
