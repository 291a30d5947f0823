import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { buildSqliteFileFrom } from '../../src/exec/database.ts';
import { SqlRunner, checkSelectTree } from '../../src/exec/sql.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-sql-'));
const dbPath = join(dir, 'coop.sqlite');
let runner: SqlRunner;

beforeAll(() => {
  buildSqliteFileFrom('grammars/sql/coop.sql', dbPath);
  runner = new SqlRunner(dbPath, { timeoutMs: 1500, rowCap: 100 });
});
afterAll(() => {
  runner.close();
  rmSync(dir, { recursive: true, force: true });
});

function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}

describe('SqlRunner', () => {
  it('returns rows as arrays, the same as SQLite run directly', async () => {
    const sql = "SELECT name, village FROM growers WHERE village = 'Oakmere' ORDER BY name";
    const r = await runner.run(sql);
    // reference: the same query through a direct better-sqlite3 connection
    const direct = new Database(dbPath, { readonly: true });
    const expected = direct.prepare(sql).raw(true).all();
    direct.close();
    expect(r).toEqual({ ok: true, value: { columns: ['name', 'village'], rows: expected } });
    expect(expected.length).toBeGreaterThan(0);
  });

  it('refuses statements that write, even though they parse', async () => {
    for (const sql of ['DELETE FROM lots', "UPDATE growers SET name = 'x'", 'CREATE TABLE t (a)', 'DROP TABLE lots']) {
      const r = await runner.run(sql);
      expect(r.ok, sql).toBe(false);
    }
    const r = await runner.run('SELECT COUNT(*) FROM lots');
    expect(r).toEqual({ ok: true, value: { columns: ['COUNT(*)'], rows: [[150]] } });
  });

  it('refuses more than one statement', async () => {
    const r = await runner.run('SELECT 1; SELECT 2');
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.error).toMatch(/more than one statement/);
  });

  it('reports SQLite errors plainly', async () => {
    const r = await runner.run('SELECT nope FROM growers');
    expect(r).toEqual({ ok: false, error: 'SQLite rejected the query: no such column: nope' });
  });

  it('treats more rows than the cap as an error, not a silent truncation', async () => {
    const r = await runner.run('SELECT id FROM lots');
    expect(r).toEqual({ ok: false, error: 'the result has more than 100 rows (row cap)' });
  });

  it('stops a runaway query by killing its process, then keeps working', async () => {
    const warm = await runner.run('SELECT 1');
    expect(warm.ok).toBe(true);
    const pid = (runner as unknown as { child: { pid: number } }).child.pid;
    const t0 = Date.now();
    // 150^5 ≈ 7.6e10 joined rows: hours of work for SQLite
    const r = await runner.run('SELECT COUNT(*) FROM lots a, lots b, lots c, lots d, lots e');
    const waited = Date.now() - t0;
    expect(r).toEqual({ ok: false, error: 'the query ran longer than 1500 ms and was stopped (time limit)' });
    expect(waited).toBeLessThan(10000);
    expect(runner.kills).toBe(1);
    await new Promise((res) => setTimeout(res, 200));
    expect(alive(pid)).toBe(false);
    const after = await runner.run('SELECT COUNT(*) FROM growers');
    expect(after).toEqual({ ok: true, value: { columns: ['COUNT(*)'], rows: [[12]] } });
  });

  it('cannot open a missing file', async () => {
    const r2 = new SqlRunner(join(dir, 'missing.sqlite'));
    const r = await r2.run('SELECT 1');
    r2.close();
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.error).toContain('missing.sqlite');
  });
});

describe('checkSelectTree', () => {
  it('accepts a select or grouped root and names any other root', () => {
    expect(checkSelectTree({ kind: 'select' })).toBeNull();
    expect(checkSelectTree({ kind: 'grouped' })).toBeNull();
    expect(checkSelectTree({ kind: 'subselect' })).toBe(
      'only a single SELECT may run, but the tree\'s root is "subselect" (at $.kind; expected "select" or "grouped")',
    );
  });
});
