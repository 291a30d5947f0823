// Every gold program parses under the shipped grammars with the demo names bound, validates,
// prints back to the same text, and every gold SQL query runs in SQLite (the outside reference
// for SQL validity) on the demo database.
import { readFileSync } from 'node:fs';
import { isDeepStrictEqual } from 'node:util';
import { describe, expect, it, vi } from 'vitest';
import { loadTargets, openDemoDatabase, SPLITS, type Row } from '../../src/dataset/index.ts';
import { createParser, printTree, validateTree } from '../../src/tree/index.ts';

vi.setConfig({ testTimeout: 180_000 });

const read = (split: string): Row[] =>
  readFileSync(`models/coop/data/${split}.jsonl`, 'utf8').split('\n').filter((l) => l !== '').map((l) => JSON.parse(l) as Row);

describe('gold programs', () => {
  const db = openDemoDatabase();
  const targets = loadTargets(db);
  const lfParser = createParser(targets.lf);
  const sqlParser = createParser(targets.sql);

  for (const split of SPLITS) {
    it(`${split}: LF and SQL parse, validate with bound names and print canonically`, () => {
      const bad: string[] = [];
      for (const r of read(split)) {
        for (const [grammar, parser, names, text] of [
          [targets.lf, lfParser, targets.lfNames, r.lf],
          [targets.sql, sqlParser, targets.sqlNames, r.sql],
        ] as const) {
          const tree = parser.parse(text, { names });
          const issue = validateTree(grammar, tree, { names });
          if (issue) bad.push(`${r.id}: ${issue.path}: ${issue.message}`);
          else if (printTree(grammar, tree) !== text) bad.push(`${r.id}: not canonical: ${text}`);
        }
      }
      expect(bad).toEqual([]);
    });

    it(`${split}: SQL runs in SQLite`, () => {
      const bad: string[] = [];
      for (const r of read(split)) {
        try {
          db.prepare(r.sql).raw().all();
        } catch (err) {
          bad.push(`${r.id}: ${(err as Error).message}`);
        }
      }
      expect(bad).toEqual([]);
    });
  }

  it('an unbound name is refused (the name check can fail)', () => {
    expect(() => lfParser.parse('lambda $x. orchard($x) & owns(nobody_here, $x)', { names: targets.lfNames })).toThrow(/nobody_here/);
    expect(() => sqlParser.parse('SELECT name FROM barns', { names: targets.sqlNames })).toThrow(/barns/);
    expect(isDeepStrictEqual(lfParser.parse('value: count $x. (shed($x))'), {
      kind: 'value', expr: { kind: 'count', var: '$x', body: { kind: 'is', class: 'shed', arg: { kind: 'var', name: '$x' } } },
    })).toBe(true);
  });
});
