import { afterAll, describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { buildCoop } from '../../src/exec/coop.ts';
import { factNames } from '../../src/exec/facts.ts';
import { constantOf } from '../../src/exec/lexicon.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-coop-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('buildCoop', () => {
  const { dbPath, facts } = buildCoop('grammars/sql/coop.sql', join(dir, 'coop.sqlite'));
  const db = new Database(dbPath, { readonly: true });
  const col = (sql: string) => (db.prepare(sql).raw(true).all() as unknown[][]).map((r) => r[0]);
  const members = (cls: string) => facts.entities.filter((_, i) => facts.classes.get(cls)![i] === 1).sort();

  it('puts the same rows in the fact base as in the SQLite file (SQLite as reference)', () => {
    expect(members('apple')).toEqual(col("SELECT name FROM varieties WHERE fruit = 'apple'").map((n) => constantOf(String(n))).sort());
    expect(members('grade_c').length).toBe(col("SELECT COUNT(*) FROM lots WHERE grade = 'C'")[0]);
    expect(members('lot').length).toBe(col('SELECT COUNT(*) FROM lots')[0]);
    expect(facts.relations.get('owns')!.size).toBe(col('SELECT COUNT(*) FROM orchards')[0]);
    expect(facts.relations.get('grows')!.size).toBe(col('SELECT COUNT(*) FROM (SELECT DISTINCT orchard_id, variety_id FROM lots)')[0]);
    const hectares = facts.measures.get('hectares')!;
    const hilltop = facts.entityId.get('hilltop_rows')!;
    expect(hectares[hilltop]).toBe(col("SELECT hectares FROM orchards WHERE name = 'Hilltop Rows'")[0]);
    expect(Number.isNaN(hectares[facts.entityId.get('oakmere')!])).toBe(true);
  });

  it('binds named rows and villages as constants, not lots', () => {
    const names = factNames(facts);
    const named = col('SELECT COUNT(*) FROM growers')[0] as number + (col('SELECT COUNT(*) FROM orchards')[0] as number)
      + (col('SELECT COUNT(*) FROM varieties')[0] as number) + (col('SELECT COUNT(*) FROM sheds')[0] as number)
      + (col('SELECT COUNT(DISTINCT village) FROM growers')[0] as number);
    expect(names.Entity.length).toBe(named);
    expect(names.Entity).toContain('little_brantby');
    expect(names.Entity.some((e) => e.startsWith('lot#'))).toBe(false);
    expect(facts.entities.length).toBe(named + (col('SELECT COUNT(*) FROM lots')[0] as number));
    db.close();
  });
});

describe('lfAgreesWithSql', () => {
  it('follows the answer conventions and says why when they differ', async () => {
    const { lfAgreesWithSql } = await import('../../src/exec/coop.ts');
    const one = (v: unknown) => ({ columns: ['x'], rows: [[v]] });
    expect(lfAgreesWithSql({ type: 'set', members: ['fox_run', 'ash_hollow'] }, { columns: ['name'], rows: [['Ash Hollow'], ['Fox Run']] })).toBeNull();
    expect(lfAgreesWithSql({ type: 'set', members: ['fox_run'] }, { columns: ['name'], rows: [['Ash Hollow'], ['Fox Run']] })).toBe('LF {fox_run} vs SQL {ash_hollow, fox_run}');
    expect(lfAgreesWithSql({ type: 'best', members: ['fox_run'] }, one('Fox Run'))).toBeNull();
    expect(lfAgreesWithSql({ type: 'best', members: ['fox_run', 'ash_hollow'] }, one('Fox Run'))).toBe('LF best {fox_run, ash_hollow} vs SQL fox_run');
    expect(lfAgreesWithSql({ type: 'number', value: 0.1 + 0.2 }, one(0.3))).toBeNull();
    expect(lfAgreesWithSql({ type: 'number', value: 3 }, one(null))).toMatch(/^a number answer needs one numeric cell/);
    expect(lfAgreesWithSql({ type: 'truth', value: true }, one(2))).toBeNull();
    expect(lfAgreesWithSql({ type: 'truth', value: true }, one(0))).toBe('LF yes vs SQL count 0');
  });
});
