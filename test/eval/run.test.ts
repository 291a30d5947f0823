import { afterAll, describe, expect, it } from 'vitest';
import { appendFileSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { evaluate } from '../../src/eval/evaluate.ts';
import { ResultsLog } from '../../src/eval/log.ts';
import { computeMetrics, computeTaxonomy } from '../../src/eval/metrics.ts';
import { checkRow, runEvaluation, runtimeCategory, sameTree, type EvalRow } from '../../src/eval/run.ts';
import { mcnemarExact } from '../../src/eval/stats.ts';
import { jsonScorer, makeItems, replayDecoder } from './fixtures/json-scorer.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-run-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('runEvaluation', () => {
  it('scores every item in both modes and the metrics follow from the rows', async () => {
    const path = join(dir, 'a.jsonl');
    const log = new ResultsLog<EvalRow>(path);
    const items = makeItems(20);
    const n = await runEvaluation({ items, decode: replayDecoder(), scorer: jsonScorer, log });
    log.close();
    expect(n).toBe(40);
    const rows = readFileSync(path, 'utf8').trim().split('\n').map((l) => JSON.parse(l) as EvalRow);
    expect(rows.map((r) => `${r.id}/${r.mode}`).slice(0, 4)).toEqual(['test-0/unconstrained', 'test-0/constrained', 'test-1/unconstrained', 'test-1/constrained']);
    const un = rows.filter((r) => r.mode === 'unconstrained');
    expect(un.map((r) => [r.valid, r.well_typed, r.executable, r.exact_match, r.execution_accuracy]).slice(0, 5)).toEqual([
      [true, true, true, true, true], // right
      [false, false, false, false, false], // truncated
      [true, true, true, false, true], // 1 + i: another tree, same answer
      [true, false, false, false, false], // unknown constructor
      [true, true, false, false, false], // division by 0 at run time
    ]);
    expect(un[1].failure?.category).toBe('truncated at max length');
    expect(un[4].failure).toEqual({ category: 'runtime error: division by N', detail: 'division by 0', offset: null });
    const m = computeMetrics(rows);
    expect(Object.keys(m)).toEqual(['test']);
    expect(m.test.unconstrained.valid).toMatchObject({ rate: 16 / 20, n: 20 });
    expect(m.test.unconstrained.exact_match.rate).toBe(4 / 20);
    expect(m.test.unconstrained.execution_accuracy.rate).toBe(8 / 20);
    expect(m.test.constrained.valid.rate).toBe(1);
    expect(m.test.constrained.exact_match.rate).toBe(16 / 20);
    // exact match: constrained-only right on i%5 ∈ {1,2,3}: b = 12; never unconstrained-only: c = 0
    expect(m.test.mcnemar_p.exact_match).toBe(mcnemarExact(12, 0));
    // execution accuracy: constrained-only right on i%5 ∈ {1,3}: b = 8; never unconstrained-only: c = 0
    expect(m.test.mcnemar_p.execution_accuracy).toBe(mcnemarExact(8, 0));
    expect(m.test.mcnemar_p.execution_accuracy).toBeCloseTo(2 / 256, 15);
    // the same discordant pairs give the differences: constrained − unconstrained = (b − c) / n
    expect(m.test.difference.exact_match).toMatchObject({ estimate: 12 / 20, n: 20, discordant: 12, ci_method: 'paired-percentile-bootstrap' });
    expect(m.test.difference.execution_accuracy).toMatchObject({ estimate: 8 / 20, n: 20, discordant: 8 });
    expect(m.test.unconstrained.valid.ci_method).toBe('wilson-score');
    const tax = computeTaxonomy(rows);
    expect(tax.unconstrained.map((t) => [t.category, t.count])).toEqual([
      ['expected num or add', 4],
      ['runtime error: division by N', 4],
      ['truncated at max length', 4],
    ]);
    expect(tax.constrained).toEqual([]);
    // failures by stage and cause: the rows above, counted by hand (4 of each failing pattern)
    expect(m.test.unconstrained.failures).toEqual({
      total: 12,
      by_stage: { not_valid: 4, not_well_typed: 4, not_executable: 4 },
      by_cause: { 'expected num or add': 4, 'runtime error: division by N': 4, 'truncated at max length': 4 },
    });
    expect(m.test.constrained.failures).toEqual({ total: 0, by_stage: { not_valid: 0, not_well_typed: 0, not_executable: 0 }, by_cause: {} });
  });

  it('skips rows already in the log and repairs a torn last line', async () => {
    const path = join(dir, 'b.jsonl');
    const log1 = new ResultsLog<EvalRow>(path);
    await runEvaluation({ items: makeItems(3), decode: replayDecoder(), scorer: jsonScorer, log: log1 });
    log1.close();
    const full = readFileSync(path, 'utf8');
    const lines = full.trim().split('\n');
    // keep 4 complete rows and half of the fifth, as a kill mid-write would leave it
    writeFileSync(path, lines.slice(0, 4).join('\n') + '\n');
    appendFileSync(path, lines[4].slice(0, 30));
    const log2 = new ResultsLog<EvalRow>(path);
    expect(log2.repairedBytes).toBe(30);
    expect(log2.rows.length).toBe(4);
    const n = await runEvaluation({ items: makeItems(3), decode: replayDecoder(), scorer: jsonScorer, log: log2 });
    log2.close();
    expect(n).toBe(2);
    const strip = (s: string) => s.trim().split('\n').map((l) => { const r = JSON.parse(l); delete r.latency_ms; delete r.mask_share; return JSON.stringify(r); });
    expect(strip(readFileSync(path, 'utf8'))).toEqual(strip(full));
  });

  it('refuses a log edited in the middle, naming the line', () => {
    const path = join(dir, 'c.jsonl');
    writeFileSync(path, '{"id":"a","mode":"constrained"}\nnot json\n{"id":"b","mode":"constrained"}\n');
    expect(() => new ResultsLog<EvalRow>(path)).toThrow(/c\.jsonl:2:1: expected a JSON object per line/);
  });
});

describe('a results.jsonl written under the old field names', () => {
  // decided: refused, not read. Continuing it would leave rows with two names for each measure in
  // one file; the message names the file, the line and the field, and says how to go on.
  it('is refused with the file, line and old field named', async () => {
    const out = join(dir, 'old');
    const log = new ResultsLog<EvalRow>(join(dir, 'fresh.jsonl'));
    await runEvaluation({ items: makeItems(2), decode: replayDecoder(), scorer: jsonScorer, log });
    log.close();
    // the rows as an earlier treewright wrote them
    const old = log.rows.map((r) => {
      const { valid, executable, execution_accuracy, ...rest } = r;
      return JSON.stringify({ ...rest, parses: valid, executes: executable, denotation_match: execution_accuracy });
    });
    rmSync(out, { recursive: true, force: true });
    mkdirSync(out);
    writeFileSync(join(out, 'results.jsonl'), old.join('\n') + '\n');
    const before = readFileSync(join(out, 'results.jsonl'), 'utf8');
    await expect(evaluate({ items: makeItems(3), decode: replayDecoder(), scorer: jsonScorer, outDir: out, meta: {} })).rejects.toThrow(
      `${join(out, 'results.jsonl')}:1:1: $.parses: the old name of the measure "valid" (this file was written by an earlier treewright); ` +
        'expected the fields valid, well_typed, executable, exact_match and execution_accuracy. Evaluate into a new --out folder, ' +
        'or rename the fields in this file (parses → valid, executes → executable, denotation_match → execution_accuracy) and run again',
    );
    // nothing was written or truncated
    expect(readFileSync(join(out, 'results.jsonl'), 'utf8')).toBe(before);
    expect(existsSync(join(out, 'metrics.json'))).toBe(false);
  });

  it('renamed as the message says, the same file is continued', async () => {
    const out = join(dir, 'old');
    const text = readFileSync(join(out, 'results.jsonl'), 'utf8')
      .replaceAll('"parses":', '"valid":')
      .replaceAll('"executes":', '"executable":')
      .replaceAll('"denotation_match":', '"execution_accuracy":');
    writeFileSync(join(out, 'results.jsonl'), text);
    const r = await evaluate({ items: makeItems(3), decode: replayDecoder(), scorer: jsonScorer, outDir: out, meta: {} });
    expect([r.resumed, r.written]).toEqual([4, 2]);
    expect(r.metrics.test.unconstrained.valid.n).toBe(3);
  });

  it('a row missing a measure is refused, naming the line and field', () => {
    const path = join(dir, 'd.jsonl');
    writeFileSync(path, '{"id":"a","mode":"constrained","valid":true,"well_typed":true,"executable":true,"exact_match":false,"execution_accuracy":true}\n{"id":"b","mode":"constrained","valid":true}\n');
    expect(() => new ResultsLog<EvalRow>(path, checkRow)).toThrow(`${path}:2:1: $.well_typed: expected true or false, found nothing`);
  });
});

describe('helpers', () => {
  it('compares trees by structure, not key order', () => {
    expect(sameTree({ kind: 'a', x: [1, { kind: 'b' }] }, { x: [1, { kind: 'b' }], kind: 'a' })).toBe(true);
    expect(sameTree({ kind: 'a', x: [1] }, { kind: 'a', x: [1, 2] })).toBe(false);
    expect(sameTree({ kind: 'a', x: null }, { kind: 'a' })).toBe(false);
  });

  it('turns runtime messages into categories', () => {
    expect(runtimeCategory('SQLite rejected the query: no such column: nope')).toBe('runtime error: SQLite rejected the query: no such column');
    expect(runtimeCategory('measure hectares is not defined for mara_feldwick (at $.expr.fn)')).toBe('runtime error: measure hectares is not defined for an entity');
  });
});
