import { describe, expect, it } from 'vitest';
import { computeMetrics } from '../../src/eval/metrics.ts';
import type { EvalRow, Mode } from '../../src/eval/run.ts';
import { wilsonInterval } from '../../src/eval/stats.ts';
import { resultsTable } from '../../src/eval/table.ts';

/** A row with the five measures set from a count of how far down the ladder the output got. */
function row(id: number, split: string, mode: Mode, level: number, latency: number): EvalRow {
  return {
    id: `${split}-${id}`, split, mode, question: 'q', gold: 'g', text: 't', tokens: 3, latency_ms: latency, model_ms: latency, mask_ms: 0,
    mask_share: 0, truncated: false, token_texts: null,
    valid: level >= 1, well_typed: level >= 2, executable: level >= 3, exact_match: level >= 5, execution_accuracy: level >= 4,
    failure: null, answer: null, gold_answer: null, gold_error: null,
  };
}

describe('resultsTable', () => {
  it('prints each mode, the difference and McNemar p from metrics.json, with the measures as columns', () => {
    // test: 20 items, unconstrained fails validity on 4 that constrained gets right; compositional: 20 of 20 in both
    const rows: EvalRow[] = [];
    for (let i = 0; i < 20; i++) {
      rows.push(row(i, 'test', 'unconstrained', i < 4 ? 0 : 5, 10 + i));
      rows.push(row(i, 'test', 'constrained', 5, 20 + i));
    }
    for (let i = 0; i < 20; i++) for (const mode of ['unconstrained', 'constrained'] as const) rows.push(row(i, 'comp', mode, 5, 30));
    const metrics = computeMetrics(rows);
    const d = metrics.test.difference.valid;
    const f = (x: number) => (x * 100).toFixed(1);
    // 16 of 20 and 20 of 20 with Wilson's interval (checked against published values in stats.test.ts)
    const w16 = wilsonInterval(16, 20)!;
    const w20 = wilsonInterval(20, 20)!;
    expect([f(w16.low), f(w16.high), f(w20.low)]).toEqual(['58.4', '91.9', '83.9']);
    const r16 = `80.0 [58.4–91.9]`;
    const r20 = `100.0 [83.9–100.0]`;
    const diff = `+20.0 [+${f(d.ci_low!)} to +${f(d.ci_high!)}]`;
    expect(resultsTable([{ target: 'lf', metrics }])).toBe(
      [
        '| target | split (n) | row | valid | well_typed | executable | exact_match | execution_accuracy | latency ms p50 / p95 |',
        '|---|---|---|---|---|---|---|---|---|',
        `| lf | test (20) | unconstrained | ${r16} | ${r16} | ${r16} | ${r16} | ${r16} | 20 / 28 |`,
        `| lf | test (20) | constrained | ${r20} | ${r20} | ${r20} | ${r20} | ${r20} | 30 / 38 |`,
        `| lf | test (20) | difference, pp | ${diff} | ${diff} | ${diff} | ${diff} | ${diff} |  |`,
        '| lf | test (20) | McNemar p | 0.125 | 0.125 | 0.125 | 0.125 | 0.125 |  |',
        `| lf | comp (20) | unconstrained | ${r20} | ${r20} | ${r20} | ${r20} | ${r20} | 30 / 30 |`,
        `| lf | comp (20) | constrained | ${r20} | ${r20} | ${r20} | ${r20} | ${r20} | 30 / 30 |`,
        '| lf | comp (20) | difference, pp | 0.0 (no item differs) | 0.0 (no item differs) | 0.0 (no item differs) | 0.0 (no item differs) | 0.0 (no item differs) |  |',
        '| lf | comp (20) | McNemar p | 1 | 1 | 1 | 1 | 1 |  |',
      ].join('\n'),
    );
    // McNemar: b = 4, c = 0 → 2 · (1/2)^4 (closed form)
    expect(metrics.test.mcnemar_p.valid).toBe(0.125);
    // latency p50 of 10..29 ms = 19.5 → "20"; p95 = 28.05 → "28" (linear interpolation)
    expect(metrics.test.unconstrained.latency_ms_p50).toBe(19.5);
  });
});
