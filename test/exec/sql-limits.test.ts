/**
 * The SQL child's limits beyond rows and time: an answer capped in bytes, and statements that
 * would read SQLite's own schema, pragma table-valued functions or introspection functions refused
 * on their bytecode (EXPLAIN; opcodes as documented at sqlite.org/opcode.html). Answers for allowed
 * statements are compared with better-sqlite3 run directly on the same file.
 */
import { afterAll, describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { buildCoop } from '../../src/exec/coop.ts';
import { SqlRunner } from '../../src/exec/sql.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-sql-limits-'));
const { dbPath } = buildCoop('grammars/sql/coop.sql', join(dir, 'coop.sqlite'));
const runners: SqlRunner[] = [];
const runner = (o: ConstructorParameters<typeof SqlRunner>[1] = {}) => {
  const r = new SqlRunner(dbPath, o);
  runners.push(r);
  return r;
};
afterAll(() => {
  for (const r of runners) r.close();
  rmSync(dir, { recursive: true, force: true });
});

describe('SQL limits', () => {
  it('an answer over the byte cap is an error, not a truncation; under it, the same rows as SQLite', async () => {
    const db = new Database(dbPath, { readonly: true });
    const rows = db.prepare('SELECT name, village FROM growers').raw().all() as unknown[][];
    db.close();
    const bytes = rows.flat().reduce<number>((n, v) => n + Buffer.byteLength(String(v)) + 2, 0);
    expect((await runner({ byteCap: bytes }).run('SELECT name, village FROM growers'))).toEqual({ ok: true, value: { columns: ['name', 'village'], rows } });
    expect(await runner({ byteCap: bytes - 1 }).run('SELECT name, village FROM growers')).toEqual({ ok: false, error: `the result is larger than ${bytes - 1} bytes (size cap)` });
  });

  it('a 25 MB answer built inside one query stops at the default 8 MiB cap', async () => {
    const r = await runner().run("WITH RECURSIVE c(x) AS (SELECT 1 UNION ALL SELECT x + 1 FROM c LIMIT 5000) SELECT printf('%.*c', 5000, 'x') FROM c");
    expect(r).toEqual({ ok: false, error: `the result is larger than ${8 * 1024 * 1024} bytes (size cap)` });
  });

  it('schema tables, pragma functions, PRAGMA and sqlite_ functions are refused; bound tables and their indexes are not', async () => {
    const r = runner();
    expect(await r.run('SELECT sql FROM sqlite_master')).toEqual({ ok: false, error: "the query reads SQLite's schema table, which is not bound for queries" });
    expect(await r.run('SELECT * FROM main.sqlite_schema')).toEqual({ ok: false, error: "the query reads SQLite's schema table, which is not bound for queries" });
    expect(await r.run('SELECT file FROM pragma_database_list')).toEqual({ ok: false, error: 'the query uses a table-valued function or virtual table (pragma_…, json_each, …), which is not allowed' });
    expect(await r.run('PRAGMA table_info(growers)')).toEqual({ ok: false, error: 'only SELECT statements may run (found PRAGMA)' });
    expect(await r.run('SELECT sqlite_version()')).toEqual({ ok: false, error: 'the query calls sqlite_version(), which is not allowed' });
    const ok = await r.run('SELECT COUNT(*) FROM lots JOIN sheds ON lots.shed_id = sheds.id WHERE sheds.id = 1');
    expect(ok.ok, JSON.stringify(ok)).toBe(true);
  });

  it('the operator can bind fewer tables', async () => {
    const r = runner({ tables: ['sheds'] });
    expect((await r.run('SELECT COUNT(*) FROM sheds')).ok).toBe(true);
    expect(await r.run('SELECT COUNT(*) FROM growers')).toEqual({ ok: false, error: 'the query reads a table that is not bound for queries' });
  });
});
