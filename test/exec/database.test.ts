/**
 * `--db script.sql`: a script is loaded into a fresh private database and may not reach any other
 * file (ATTACH, DETACH, VACUUM INTO refused; load_extension refused by SQLite), while ordinary
 * dumps — comments, strings holding `;`, triggers with `;` inside their body — build exactly what
 * SQLite's own `exec` builds from the same text.
 */
import Database from 'better-sqlite3';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { afterAll, afterEach, beforeEach, describe, expect, it } from 'vitest';
import { databaseKind, openDatabaseFile } from '../../src/exec/database.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-db-script-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// scripts name files relative to the working folder: run them from `dir`, so a created file shows there
let cwd = '';
beforeEach(() => {
  cwd = process.cwd();
  process.chdir(dir);
});
afterEach(() => process.chdir(cwd));

const script = (name: string, text: string) => {
  const file = join(dir, name);
  writeFileSync(file, text);
  return file;
};

/** Every row of every table, through a read-only handle (what the executors see). */
function dump(path: string): Record<string, unknown[]> {
  const db = new Database(path, { readonly: true });
  try {
    const out: Record<string, unknown[]> = {};
    for (const t of db.prepare("SELECT name FROM sqlite_schema WHERE type = 'table' ORDER BY name").pluck().all() as string[]) {
      out[t] = db.prepare(`SELECT * FROM "${t}"`).all();
    }
    return out;
  } finally {
    db.close();
  }
}

describe('openDatabaseFile with a .sql script', () => {
  it('builds what SQLite builds from the same text, in a private folder removed by dispose()', () => {
    const text = [
      'PRAGMA foreign_keys=OFF;',
      'BEGIN TRANSACTION;',
      'CREATE TABLE sheds (id INTEGER PRIMARY KEY, name TEXT); -- a comment; with a semicolon',
      '/* a block; comment */ CREATE TABLE log (what TEXT);',
      "CREATE TRIGGER note AFTER INSERT ON sheds BEGIN INSERT INTO log VALUES ('new; shed'); INSERT INTO log VALUES (NEW.name); END;",
      "INSERT INTO sheds (name) VALUES ('River Barn'), ('Old Mill; East'), ('it''s');",
      'SELECT count(*) FROM sheds;',
      'COMMIT;',
    ].join('\n');
    const file = script('sheds.sql', text);
    // reference: better-sqlite3's exec (sqlite3_exec) on the same text
    const ref = join(dir, 'reference.sqlite');
    const r = new Database(ref);
    r.exec(text);
    r.close();

    const db = openDatabaseFile(file);
    expect(db.fromScript).toBe(true);
    expect(db.source).toBe(file);
    expect(dump(db.path)).toEqual(dump(ref));
    expect(dump(db.path).log).toHaveLength(6);
    // a new folder of the temporary directory, 0700, holding only the database (0600)
    const folder = dirname(db.path);
    expect(dirname(folder)).toBe(tmpdir());
    expect(statSync(folder).mode & 0o777).toBe(0o700);
    expect(statSync(db.path).mode & 0o777).toBe(0o600);
    expect(readdirSync(folder)).toEqual(['sheds.sqlite']);
    db.dispose();
    expect(existsSync(folder)).toBe(false);
  });

  it('refuses ATTACH, DETACH and VACUUM with the line and column, and creates no file', () => {
    const cases: [string, string, string][] = [
      ['attach.sql', "CREATE TABLE a (x);\n  ATTACH 'planted.db' AS p;\nCREATE TABLE p.t (x);\n", 'attach.sql:2:3: ATTACH is not allowed in a script'],
      ['attach-lower.sql', "/* ; */ attach database 'planted.db' as p;", 'attach-lower.sql:1:9: ATTACH is not allowed in a script'],
      ['vacuum.sql', "CREATE TABLE a (x);\nVACUUM INTO 'planted.db';\n", 'vacuum.sql:2:1: VACUUM is not allowed in a script'],
      ['detach.sql', 'DETACH DATABASE temp;', 'detach.sql:1:1: DETACH is not allowed in a script'],
    ];
    for (const [name, text, message] of cases) {
      const file = script(name, text);
      expect(() => openDatabaseFile(file)).toThrow(
        `${message}; expected statements that build a database (CREATE, INSERT, UPDATE, DELETE, PRAGMA, …) — ATTACH, DETACH and VACUUM could reach other files`,
      );
      expect(existsSync(join(dir, 'planted.db')), name).toBe(false);
    }
  });

  it('a script cannot load an extension (SQLite: "not authorized")', () => {
    const file = script('ext.sql', "CREATE TABLE a (x);\nSELECT load_extension('./planted.so');\n");
    expect(() => openDatabaseFile(file)).toThrow('ext.sql:2:1: SQLite could not run the statement: not authorized');
  });

  it('a broken statement is located', () => {
    const file = script('broken.sql', "CREATE TABLE a (x);\nINSERT INTO b VALUES (1);\n");
    expect(() => openDatabaseFile(file)).toThrow(`${file}:2:1: SQLite could not run the statement: no such table: b`);
  });
});

describe('what a --db value is', () => {
  it('a SQLite file by its header (any name), a script by its .sql name, else a clear refusal', () => {
    const db = join(dir, 'plain.data');
    new Database(db).exec('CREATE TABLE t (x)');
    expect(databaseKind(db)).toBe('sqlite');
    const opened = openDatabaseFile(db);
    expect(opened).toMatchObject({ path: db, fromScript: false });
    opened.dispose();
    expect(existsSync(db)).toBe(true);
    expect(databaseKind(script('x.sql', 'CREATE TABLE t (x);'))).toBe('script');
    expect(databaseKind(script('notes.txt', 'hello'))).toEqual({ problem: 'not a SQLite database (no "SQLite format 3" header) and not a .sql script; expected one of them' });
    expect(() => openDatabaseFile(join(dir, 'missing.sql'))).toThrow(`${join(dir, 'missing.sql')}: no such file; expected a SQLite database or a .sql script`);
    expect(databaseKind(dir)).toEqual({ problem: 'not a file; expected a SQLite database or a .sql script' });
  });

  it('the shipped cooperative script builds the demo database', () => {
    const db = openDatabaseFile(join(cwd, 'grammars/sql/coop.sql'));
    try {
      expect(Object.keys(dump(db.path)).sort()).toEqual(['growers', 'lots', 'orchards', 'sheds', 'varieties']);
      expect(readFileSync(db.path).subarray(0, 15).toString('latin1')).toBe('SQLite format 3');
    } finally {
      db.dispose();
    }
  });
});
