/**
 * Outside cross-check of the LF executor: for every dataset item of every split, the logical
 * form's denotation in the fact base equals the gold SQL's result computed by SQLite (the
 * independent reference), compared by the dataset's answer conventions (lfAgreesWithSql).
 * Both come from grammars/sql/coop.sql through one build (buildCoop).
 */
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { loadGrammar } from '../../src/description/index.ts';
import { buildCoop, lfAgreesWithSql } from '../../src/exec/coop.ts';
import { factNames } from '../../src/exec/facts.ts';
import { evaluateLf, type LfAnswer } from '../../src/exec/lf.ts';
import { SqlRunner } from '../../src/exec/sql.ts';
import { createParser } from '../../src/tree/index.ts';
import type { Tree } from '../../src/exec/types.ts';

const SPLITS = ['train', 'dev', 'test', 'compositional'];
const dir = mkdtempSync(join(tmpdir(), 'tw-cross-'));
const { dbPath, facts } = buildCoop('grammars/sql/coop.sql', join(dir, 'coop.sqlite'));
const runner = new SqlRunner(dbPath, { timeoutMs: 5000 });
afterAll(() => {
  runner.close();
  rmSync(dir, { recursive: true, force: true });
});

interface Row { id: string; split: string; question: string; sql: string; lf: string; template: string }

describe('LF denotation = SQLite result for every dataset item', () => {
  const lfGrammar = loadGrammar('grammars/lf/lf.twg');
  const lfParser = createParser(lfGrammar);
  const lfNames = factNames(facts);

  for (const split of SPLITS) {
    it(`split ${split}`, async () => {
      const rows = readFileSync(`models/coop/data/${split}.jsonl`, 'utf8').split('\n').filter((l) => l !== '').map((l) => JSON.parse(l) as Row);
      expect(rows.length).toBeGreaterThan(0);
      const problems: string[] = [];
      const byForm = new Map<string, number>();
      for (const row of rows) {
        const lfTree = lfParser.parse(row.lf, { file: `${row.id}.lf`, names: lfNames }) as Tree;
        const lf = evaluateLf(facts, lfTree);
        // the gold SQL text as the dataset gives it, run by SQLite (read-only)
        const sql = await runner.run(row.sql);
        if (!lf.ok || !sql.ok) {
          problems.push(`${row.id} [${row.template}]: ${!lf.ok ? `LF error ${lf.error}` : ''} ${!sql.ok ? `SQL error ${sql.error}` : ''}`);
          continue;
        }
        const why = lfAgreesWithSql(lf.value as LfAnswer, sql.value as { columns: string[]; rows: unknown[][] });
        if (why !== null) problems.push(`${row.id} [${row.template}]: ${why}\n  ${row.lf}\n  ${row.sql}`);
        const form = row.template.split(':')[0];
        byForm.set(form, (byForm.get(form) ?? 0) + 1);
      }
      expect(problems.slice(0, 20).join('\n')).toBe('');
      expect(problems.length).toBe(0);
      // every answer form of the templates was compared (not skipped)
      expect([...byForm.values()].reduce((a, b) => a + b, 0)).toBe(rows.length);
    }, 300000);
  }
});

describe('ranging binders over a class changes no answer', () => {
  it('test split and hand-written samples: same answers with and without class ranges', () => {
    const parser = createParser(loadGrammar('grammars/lf/lf.twg'));
    const names = factNames(facts);
    const texts = [
      ...readFileSync('models/coop/data/test.jsonl', 'utf8').split('\n').filter((l) => l !== '').map((l) => (JSON.parse(l) as Row).lf),
      ...readFileSync('grammars/lf/samples/valid.lf', 'utf8').split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#')),
    ];
    let compared = 0;
    for (const text of texts) {
      const tree = parser.parse(text, { names }) as Tree;
      const fast = evaluateLf(facts, tree);
      const full = evaluateLf(facts, tree, { rangeByClass: false, stepLimit: 50_000_000 });
      expect(fast, text).toEqual(full);
      compared++;
    }
    expect(compared).toBeGreaterThan(400);
  }, 300000);
});
