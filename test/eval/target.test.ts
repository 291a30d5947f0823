import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { loadGrammar } from '../../src/description/index.ts';
import { buildCoop } from '../../src/exec/coop.ts';
import { factNames } from '../../src/exec/facts.ts';
import { lfExecutor } from '../../src/exec/lf.ts';
import { SqlRunner, sqlExecutor } from '../../src/exec/sql.ts';
import { createScorer, sameAnswer } from '../../src/eval/target.ts';
import { loadNames, namesFromDatabase } from '../../src/tree/index.ts';
import type { Tree } from '../../src/exec/types.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-target-'));
const { dbPath, facts } = buildCoop('grammars/sql/coop.sql', join(dir, 'coop.sqlite'));
const runner = new SqlRunner(dbPath);
afterAll(() => {
  runner.close();
  rmSync(dir, { recursive: true, force: true });
});

const lfGrammar = loadGrammar('grammars/lf/lf.twg');
const sqlGrammar = loadGrammar('grammars/sql/sql.twg');
const lf = createScorer({ grammar: lfGrammar, names: factNames(facts), execute: lfExecutor(facts) });
const sql = createScorer({ grammar: sqlGrammar, names: namesFromDatabase(dbPath), execute: sqlExecutor(runner, sqlGrammar) });

function programs(file: string): string[] {
  return readFileSync(file, 'utf8').split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#'));
}

describe('LF scorer', () => {
  it('binds the same names as the hand-written samples file, and runs every valid sample', async () => {
    // grammars/lf/samples/names.json was written from the lexicon by the grammar samples' author
    const sampleNames = loadNames('grammars/lf/samples/names.json', lfGrammar);
    const ours = factNames(facts);
    for (const set of ['Entity', 'Class', 'Rel', 'Measure']) expect([...ours[set]].sort(), set).toEqual([...sampleNames[set]].sort());
    for (const p of programs('grammars/lf/samples/valid.lf')) {
      const a = lf.analyse(p, false);
      expect(a.failure, p).toBeNull();
      const r = await lf.execute(a.tree!);
      expect(r.ok, `${p}: ${r.ok ? '' : r.error}`).toBe(true);
    }
  });

  it('names where an output first went wrong, in the grammar\'s terms', () => {
    expect(lf.analyse('holds: owns(mara_feldwick hilltop_rows)', false).failure).toEqual({ category: 'expected ")" or ","', detail: 'expected ")" or ","', offset: 26 });
    const cut = 'lambda $x. grower($x) & lives_in($x,';
    expect(lf.analyse(cut, true).failure?.category).toBe('truncated at max length');
    expect(lf.analyse(cut, false).failure?.category).toMatch(/^ended early, expected /);
    const unk = lf.analyse('lambda $x. banana($x)', false);
    expect([unk.valid, unk.well_typed, unk.failure?.category, unk.failure?.offset]).toEqual([true, false, 'unknown name', 11]);
    const unb = lf.analyse('lambda $x. grower($y)', false);
    expect([unb.valid, unb.well_typed, unb.failure?.category]).toEqual([true, false, 'unbound variable']);
  });
});

describe('SQL scorer', () => {
  it('runs every valid SQL sample read-only', async () => {
    for (const p of programs('grammars/sql/samples/valid.sql')) {
      const a = sql.analyse(p, false);
      expect(a.failure, p).toBeNull();
      const r = await sql.execute(a.tree!);
      expect(r.ok, `${p}: ${r.ok ? '' : r.error}`).toBe(true);
    }
  });

  it('compares rows in order only when the gold query orders them', async () => {
    const run = async (q: string) => {
      const a = sql.analyse(q, false);
      const r = await sql.execute(a.tree!);
      return { tree: a.tree as Tree, value: r.ok ? r.value : null };
    };
    const asc = await run('SELECT name FROM sheds ORDER BY capacity_tonnes ASC');
    const desc = await run('SELECT name FROM sheds ORDER BY capacity_tonnes DESC');
    const plain = await run('SELECT name FROM sheds');
    expect(sameAnswer(asc.value, desc.value, asc.tree)).toBe(false);
    expect(sameAnswer(plain.value, desc.value, plain.tree)).toBe(true);
    const avg = await run('SELECT AVG(hectares) FROM orchards');
    const sum = await run('SELECT SUM(hectares) FROM orchards');
    expect(sameAnswer(avg.value, sum.value, avg.tree)).toBe(false);
  });
});
