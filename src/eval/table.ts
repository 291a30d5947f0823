/**
 * The README's results table, made from metrics.json files so that its figures are never typed by
 * hand. One block of rows per (target, split): each mode's rates with their 95% Wilson intervals
 * and latency p50 / p95, the difference constrained − unconstrained in percentage points with its
 * paired-bootstrap interval, and McNemar's p. Columns carry the measures' own names.
 *
 * Example: `resultsTable([{ target: 'lf', metrics }])` →
 * ```
 * | target | split (n) | row | valid | well_typed | … | latency ms p50 / p95 |
 * |---|---|---|---|---|---|---|
 * | lf | test (400) | unconstrained | 99.3 [97.8–99.7] | … | 12 / 24 |
 * ```
 */
import type { Metrics } from './metrics.ts';
import { RATE_METRICS } from './metrics.ts';
import { pct, pp } from './report.ts';
import type { DifferenceCI, RateCI } from './stats.ts';

export interface TableInput {
  /** the name shown in the first column (e.g. the grammar) */
  readonly target: string;
  readonly metrics: Metrics;
}

/** A rate in percent, one decimal, as the report shows it (without the % sign). */
function percent(x: number | null): string {
  return pct(x).replace('%', '');
}

/** A difference in percentage points with its sign, as the report shows it: "+19.3", "−0.5", "0.0". */
const points = pp;

function rateCell(r: RateCI): string {
  return r.rate === null ? '–' : `${percent(r.rate)} [${percent(r.ci_low)}–${percent(r.ci_high)}]`;
}

function differenceCell(d: DifferenceCI): string {
  if (d.estimate === null) return '–';
  if (d.ci_low === null || d.ci_high === null) return `${points(d.estimate)} (no item differs)`;
  return `${points(d.estimate)} [${points(d.ci_low)} to ${points(d.ci_high)}]`;
}

function pValue(p: number | null): string {
  return p === null ? '–' : Number(p.toPrecision(3)).toString();
}

function latency(x: number | null): string {
  return x === null ? '–' : String(Math.round(x));
}

/** The Markdown table (no trailing newline). */
export function resultsTable(inputs: readonly TableInput[]): string {
  const head = ['target', 'split (n)', 'row', ...RATE_METRICS, 'latency ms p50 / p95'];
  const lines = [`| ${head.join(' | ')} |`, `|${head.map(() => '---').join('|')}|`];
  const row = (cells: readonly string[]) => lines.push(`| ${cells.join(' | ')} |`);
  for (const { target, metrics } of inputs) {
    for (const [split, m] of Object.entries(metrics)) {
      const nu = m.unconstrained.valid.n;
      const nc = m.constrained.valid.n;
      const label = `${split} (${nu === nc ? nu : `${nu} / ${nc}`})`;
      for (const mode of ['unconstrained', 'constrained'] as const) {
        const mm = m[mode];
        row([target, label, mode, ...RATE_METRICS.map((k) => rateCell(mm[k])), `${latency(mm.latency_ms_p50)} / ${latency(mm.latency_ms_p95)}`]);
      }
      row([target, label, 'difference, pp', ...RATE_METRICS.map((k) => differenceCell(m.difference[k])), '']);
      row([target, label, 'McNemar p', ...RATE_METRICS.map((k) => pValue(m.mcnemar_p[k])), '']);
    }
  }
  return lines.join('\n');
}
