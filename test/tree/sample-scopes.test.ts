/**
 * The sampler produces only programs that resolve: 500 `sample --db`-style programs (names bound
 * from the database file, joins and subqueries included) on the demo schema and on a second
 * invented schema that exists only here, every one prepared by SQLite itself (better-sqlite3 12.x
 * `prepare`, the reference: it rejects unknown, ambiguous and out-of-scope names).
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, describe, expect, it } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import { createSampler, namesFromDatabase, printTree, type Tree } from '../../src/tree/index.ts';
import { coopDatabaseFile } from '../grammars/support.ts';

const sql = loadGrammar('grammars/sql/sql.twg');
const dir = mkdtempSync(join(tmpdir(), 'tw-sample-scopes-'));
const coopFile = coopDatabaseFile();
afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
  rmSync(dirname(coopFile), { recursive: true, force: true });
});

// An invented schema (a cider press's ledger): shared column names across tables (id, name, year,
// press_id) so that unqualified references are often ambiguous, and a table with one column.
const NURSERY = `
CREATE TABLE presses (id INTEGER PRIMARY KEY, name TEXT, built_year INTEGER, capacity REAL);
CREATE TABLE batches (id INTEGER PRIMARY KEY, press_id INTEGER, year INTEGER, litres REAL, name TEXT);
CREATE TABLE tastings (id INTEGER PRIMARY KEY, batch_id INTEGER, score INTEGER, year INTEGER, taster TEXT);
CREATE TABLE tasters (name TEXT);
INSERT INTO presses VALUES (1, 'Old Screw', 1921, 3.5);
INSERT INTO batches VALUES (1, 1, 2024, 900.5, 'First Pressing');
INSERT INTO tastings VALUES (1, 1, 8, 2025, 'Wenna');
INSERT INTO tasters VALUES ('Wenna');
`;

interface Stats {
  prepared: number;
  joins: number;
  subqueries: number;
  qualified: number;
}

function run(dbFile: string, seed: number): { stats: Stats; failures: string[] } {
  const names = namesFromDatabase(dbFile);
  const db = new Database(dbFile, { readonly: true });
  const sampler = createSampler(sql, { seed, names });
  const stats: Stats = { prepared: 0, joins: 0, subqueries: 0, qualified: 0 };
  const failures: string[] = [];
  for (let i = 0; i < 500; i++) {
    const tree = sampler.next();
    const text = printTree(sql, tree);
    try {
      db.prepare(text);
      stats.prepared++;
    } catch (e) {
      failures.push(`${(e as Error).message}: ${text}`);
    }
    const json = JSON.stringify(tree);
    if (((tree as Tree).joins as unknown[]).length > 0) stats.joins++;
    if (json.includes('"subselect"')) stats.subqueries++;
    if (/"table":"/.test(json)) stats.qualified++;
  }
  db.close();
  return { stats, failures };
}

describe('sample --db: every program prepares in SQLite', () => {
  it('500 programs on the demo schema (grammars/sql/coop.sql)', { timeout: 300_000 }, () => {
    const { stats, failures } = run(coopFile, 11);
    expect(failures).toEqual([]);
    expect(stats.prepared).toBe(500);
    // not vacuous: joins, subqueries and qualified columns all occur
    expect(stats.joins).toBeGreaterThan(50);
    expect(stats.subqueries).toBeGreaterThan(10);
    expect(stats.qualified).toBeGreaterThan(50);
  });

  it('500 programs on an invented schema written only in this test', { timeout: 300_000 }, () => {
    const file = join(dir, 'press.db');
    const db = new Database(file);
    db.exec(NURSERY);
    db.close();
    const { stats, failures } = run(file, 12);
    expect(failures).toEqual([]);
    expect(stats.prepared).toBe(500);
    expect(stats.joins).toBeGreaterThan(50);
    expect(stats.subqueries).toBeGreaterThan(10);
  });
});
