/**
 * metrics.json and the taxonomy of failures, computed from result rows.
 *
 * metrics.json:
 * ```
 * { "<split>": {
 *     "unconstrained": { "valid": R, "well_typed": R, "executable": R, "exact_match": R,
 *                        "execution_accuracy": R, "latency_ms_p50": ms, "latency_ms_p95": ms,
 *                        "failures": F },
 *     "constrained":   { …the same… },
 *     "difference": { "valid": D, "well_typed": D, …the five measures },
 *     "mcnemar_p":  { "valid": p, "well_typed": p, …the five measures } } }
 * ```
 * R = `{ "rate", "ci_low", "ci_high", "n", "ci_method": "wilson-score" }`: the share of items
 * with the measure true and its 95% Wilson score interval (see stats.ts).
 * D = `{ "estimate", "ci_low", "ci_high", "n", "discordant", "ci_method":
 * "paired-percentile-bootstrap", "resamples", "seed" }`: constrained rate − unconstrained rate on
 * the n items decoded in both modes, with a 95% paired percentile-bootstrap interval; the bounds
 * are null when no item differs between the modes (`discordant` = 0; the bootstrap then has no
 * spread to measure).
 * F = `{ "total", "by_stage": { "not_valid", "not_well_typed", "not_executable" }, "by_cause":
 * { "<category>": count, … } }`: the rows that did not execute, by the first stage that failed (not
 * a program; a program whose names, scopes or kinds do not resolve; a program that ran into an
 * error — time limit, row cap, division by zero, …) and by cause (the taxonomy category of the
 * row's failure, most frequent first). Added after the other fields: they keep their names.
 * Every interval names its method in `ci_method`.
 * valid = the output is a program of the grammar; well_typed = it also passes the tree check with
 * the bound names; executable = it ran without error; exact_match = tree equal to gold;
 * execution_accuracy = its answer equals the gold answer. `mcnemar_p` compares the two modes on the
 * items decoded in both (exact two-sided test on discordant pairs); null when a mode has no rows.
 */
import { mcnemarPaired, pairedBootstrapDifferences, quantile, wilsonRate, type DifferenceCI, type RateCI } from './stats.ts';
import { MEASURES, type EvalRow, type Mode } from './run.ts';

export interface ModeMetrics {
  readonly valid: RateCI;
  readonly well_typed: RateCI;
  readonly executable: RateCI;
  readonly exact_match: RateCI;
  readonly execution_accuracy: RateCI;
  readonly latency_ms_p50: number | null;
  readonly latency_ms_p95: number | null;
  /** the rows that did not execute, counted by stage and by cause */
  readonly failures: FailureCounts;
}

/** Failure counts of one mode (see the file comment, F). */
export interface FailureCounts {
  readonly total: number;
  readonly by_stage: { readonly not_valid: number; readonly not_well_typed: number; readonly not_executable: number };
  /** taxonomy category → rows, most frequent first (ties by category) */
  readonly by_cause: Readonly<Record<string, number>>;
}

function failureCounts(rows: readonly EvalRow[]): FailureCounts {
  let notValid = 0;
  let notTyped = 0;
  let notRun = 0;
  const causes = new Map<string, number>();
  for (const r of rows) {
    if (r.executable) continue;
    if (!r.valid) notValid++;
    else if (!r.well_typed) notTyped++;
    else notRun++;
    const c = r.failure?.category ?? 'unknown';
    causes.set(c, (causes.get(c) ?? 0) + 1);
  }
  const by_cause = Object.fromEntries([...causes].sort((a, b) => b[1] - a[1] || (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0)));
  return { total: notValid + notTyped + notRun, by_stage: { not_valid: notValid, not_well_typed: notTyped, not_executable: notRun }, by_cause };
}

export interface SplitMetrics {
  readonly unconstrained: ModeMetrics;
  readonly constrained: ModeMetrics;
  /** constrained − unconstrained, per measure, on the items decoded in both modes */
  readonly difference: Readonly<Record<RateMetric, DifferenceCI>>;
  readonly mcnemar_p: Readonly<Record<RateMetric, number | null>>;
}

export type Metrics = Record<string, SplitMetrics>;

/** The five measures; each is a boolean field of the same name in every row of results.jsonl. */
export const RATE_METRICS = MEASURES;
export type RateMetric = (typeof RATE_METRICS)[number];

function outcome(row: EvalRow, metric: RateMetric): boolean {
  return row[metric];
}

function modeMetrics(rows: readonly EvalRow[]): ModeMetrics {
  const lat = rows.map((r) => r.latency_ms);
  const rate = (m: RateMetric) => wilsonRate(rows.map((r) => outcome(r, m)));
  return {
    valid: rate('valid'),
    well_typed: rate('well_typed'),
    executable: rate('executable'),
    exact_match: rate('exact_match'),
    execution_accuracy: rate('execution_accuracy'),
    latency_ms_p50: round(quantile(lat, 0.5)),
    latency_ms_p95: round(quantile(lat, 0.95)),
    failures: failureCounts(rows),
  };
}

function byMeasure<T>(f: (m: RateMetric, i: number) => T): Record<RateMetric, T> {
  return Object.fromEntries(RATE_METRICS.map((m, i) => [m, f(m, i)])) as Record<RateMetric, T>;
}

function round(x: number | null): number | null {
  return x === null ? null : Math.round(x * 1000) / 1000;
}

/** Splits in first-seen order. */
export function splitsOf(rows: readonly EvalRow[]): string[] {
  return [...new Set(rows.map((r) => r.split))];
}

export function computeMetrics(rows: readonly EvalRow[]): Metrics {
  const out: Metrics = {};
  for (const split of splitsOf(rows)) {
    const inSplit = rows.filter((r) => r.split === split);
    const by = (mode: Mode) => inSplit.filter((r) => r.mode === mode);
    const un = by('unconstrained');
    const co = by('constrained');
    const coById = new Map(co.map((r) => [r.id, r]));
    const pairs = un.filter((r) => coById.has(r.id)).map((r) => [r, coById.get(r.id)!] as const);
    const p = (metric: RateMetric) =>
      pairs.length === 0 ? null : mcnemarPaired(pairs.map(([, c]) => outcome(c, metric)), pairs.map(([u]) => outcome(u, metric))).p;
    const diffs = pairedBootstrapDifferences(
      RATE_METRICS.map((m) => pairs.map(([u]) => outcome(u, m))),
      RATE_METRICS.map((m) => pairs.map(([, c]) => outcome(c, m))),
    );
    out[split] = {
      unconstrained: modeMetrics(un),
      constrained: modeMetrics(co),
      difference: byMeasure((_m, i) => diffs[i]),
      mcnemar_p: byMeasure((m) => p(m)),
    };
  }
  return out;
}

export interface TaxonomyEntry {
  readonly category: string;
  readonly count: number;
  /** an example id (the first seen) */
  readonly example: string;
}

/** Failures per mode, most frequent first (ties by category name). */
export function computeTaxonomy(rows: readonly EvalRow[]): Record<Mode, TaxonomyEntry[]> {
  const result = { unconstrained: [] as TaxonomyEntry[], constrained: [] as TaxonomyEntry[] };
  for (const mode of ['unconstrained', 'constrained'] as const) {
    const counts = new Map<string, { count: number; example: string }>();
    for (const r of rows) {
      if (r.mode !== mode || r.failure === null) continue;
      const c = counts.get(r.failure.category);
      if (c) c.count++;
      else counts.set(r.failure.category, { count: 1, example: r.id });
    }
    result[mode] = [...counts]
      .map(([category, { count, example }]) => ({ category, count, example }))
      .sort((a, b) => b.count - a.count || (a.category < b.category ? -1 : a.category > b.category ? 1 : 0));
  }
  return result;
}
