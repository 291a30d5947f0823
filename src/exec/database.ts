/**
 * SQLite files from SQL scripts (schema and rows), e.g. the demo cooperative in
 * grammars/sql/coop.sql, and the one rule every `--db` follows: a SQLite database is used as it
 * is; a `.sql` script is loaded into a fresh database that nothing else can reach.
 *
 * A script is untrusted text. It runs statement by statement on an in-memory database (SQLite's
 * own parser finds where each statement ends), and only statements that build a database are
 * allowed: CREATE, INSERT, REPLACE, UPDATE, DELETE, WITH, SELECT, VALUES, DROP, ALTER, ANALYZE,
 * REINDEX, PRAGMA and transaction control. ATTACH, DETACH and VACUUM (`VACUUM INTO 'file'` writes
 * a file) are refused with the script's line and column, so a script cannot create or change any
 * other file; `load_extension()` is refused by SQLite itself (better-sqlite3 enables extension
 * loading through its C API only, not as an SQL function). The finished database is written out
 * in one piece (SQLite's serialisation) into a new folder of the temporary directory created with
 * mode 0700, as a file created exclusively (0600).
 *
 * Limits: a script's statements run without a time limit (a script is the operator's or user's
 * own file, never a request body); the whole database is held in memory while it is built.
 */
import type Database from 'better-sqlite3';
import { sqlite } from '../util/optional.ts';
import { chmodSync, closeSync, existsSync, mkdirSync, mkdtempSync, openSync, readFileSync, readSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, dirname, join } from 'node:path';
import { lineColumn } from '../util/source.ts';

/** First keywords of the statements a script may run (everything else is refused). */
const ALLOWED = new Set([
  'CREATE', 'INSERT', 'REPLACE', 'UPDATE', 'DELETE', 'WITH', 'SELECT', 'VALUES', 'DROP', 'ALTER', 'ANALYZE', 'REINDEX', 'PRAGMA',
  'BEGIN', 'COMMIT', 'END', 'ROLLBACK', 'SAVEPOINT', 'RELEASE',
]);

/** The 16-byte header every SQLite 3 database file starts with (sqlite.org/fileformat.html §1.3.1). */
const SQLITE_HEADER = 'SQLite format 3\u0000';

/**
 * Offsets just past each `;` that lies outside string literals, quoted identifiers and comments
 * (SQLite's lexical rules: '…' and "…" with doubled quotes, `…`, […], -- to the end of the line,
 * and block comments), plus the end of the text. Hand-written: the statements themselves are
 * parsed by SQLite; this only proposes where one may end.
 */
function statementEnds(text: string): number[] {
  const ends: number[] = [];
  const n = text.length;
  let i = 0;
  while (i < n) {
    const c = text[i];
    if (c === "'" || c === '"' || c === '`') {
      i++;
      while (i < n) {
        if (text[i] === c) {
          if (text[i + 1] === c) i += 2;
          else break;
        } else i++;
      }
      i++;
    } else if (c === '[') {
      const close = text.indexOf(']', i + 1);
      i = close < 0 ? n : close + 1;
    } else if (c === '-' && text[i + 1] === '-') {
      const eol = text.indexOf('\n', i + 2);
      i = eol < 0 ? n : eol + 1;
    } else if (c === '/' && text[i + 1] === '*') {
      const close = text.indexOf('*/', i + 2);
      i = close < 0 ? n : close + 2;
    } else if (c === ';') {
      ends.push(++i);
    } else i++;
  }
  if (ends.length === 0 || ends[ends.length - 1] !== n) ends.push(n);
  return ends;
}

/** Offset of the first character of `text[from, to)` that is not whitespace or a comment, or -1. */
function firstToken(text: string, from: number, to: number): number {
  let i = from;
  while (i < to) {
    const c = text[i];
    if (c === ' ' || c === '\t' || c === '\n' || c === '\r' || c === '\f' || c === ';') i++;
    else if (c === '-' && text[i + 1] === '-') {
      const eol = text.indexOf('\n', i + 2);
      i = eol < 0 ? to : eol + 1;
    } else if (c === '/' && text[i + 1] === '*') {
      const close = text.indexOf('*/', i + 2);
      i = close < 0 ? to : close + 2;
    } else return i;
  }
  return -1;
}

/** An error in a script, located: `FILE:LINE:COL: what; expected …`. */
function scriptError(name: string, text: string, offset: number, what: string): Error {
  const { line, column } = lineColumn(text, offset);
  return new Error(`${name}:${line}:${column}: ${what}`);
}

/**
 * Runs a SQL script on `db`, one statement at a time, refusing every statement that does not build
 * a database (see the file comment). Errors name the script, line and column.
 */
export function runSqlScript(db: Database.Database, script: string, name = 'the SQL script'): void {
  const ends = statementEnds(script);
  let start = 0;
  for (let k = 0; k < ends.length; k++) {
    const at = firstToken(script, start, ends[k]);
    if (at < 0) {
      start = ends[k];
      continue;
    }
    const keyword = /^[A-Za-z]+/.exec(script.slice(at, at + 16))?.[0].toUpperCase() ?? '';
    if (!ALLOWED.has(keyword)) {
      const found = keyword === '' ? JSON.stringify(script.slice(at, at + 12)) : keyword;
      throw scriptError(name, script, at, `${found} is not allowed in a script; expected statements that build a database (CREATE, INSERT, UPDATE, DELETE, PRAGMA, …) — ATTACH, DETACH and VACUUM could reach other files`);
    }
    let stmt: Database.Statement | null = null;
    let end = ends[k];
    for (;;) {
      try {
        stmt = db.prepare(script.slice(at, end));
        break;
      } catch (e) {
        // a trigger body holds `;`s of its own: SQLite says "incomplete input" until its END
        if ((e as Error).message === 'incomplete input' && k + 1 < ends.length) {
          end = ends[++k];
          continue;
        }
        throw scriptError(name, script, at, `SQLite could not run the statement: ${(e as Error).message}`);
      }
    }
    try {
      if (stmt.reader) for (const _row of stmt.iterate()) void _row;
      else stmt.run();
    } catch (e) {
      throw scriptError(name, script, at, `SQLite could not run the statement: ${(e as Error).message}`);
    }
    start = end;
  }
}

/** The script's database as bytes (built in memory; see runSqlScript). */
function buildInMemory(script: string, scriptName: string): Buffer {
  const db = new (sqlite())(':memory:');
  try {
    runSqlScript(db, script, scriptName);
    return db.serialize();
  } finally {
    db.close();
  }
}

/** Runs `script` (the text of a .sql file) into a new SQLite file at `outPath` (replaced if it exists). */
export function buildSqliteFile(script: string, outPath: string, scriptName = 'the SQL script'): void {
  const bytes = buildInMemory(script, scriptName);
  mkdirSync(dirname(outPath), { recursive: true });
  const tmp = `${outPath}.${process.pid}.tmp`;
  rmSync(tmp, { force: true });
  writeFileSync(tmp, bytes, { flag: 'wx', mode: 0o600 });
  renameSync(tmp, outPath);
}

/** Reads a .sql script and builds `outPath` from it. */
export function buildSqliteFileFrom(sqlFile: string, outPath: string): void {
  if (!existsSync(sqlFile)) throw new Error(`${sqlFile}: no such file (expected a SQL script of CREATE TABLE and INSERT statements)`);
  buildSqliteFile(readFileSync(sqlFile, 'utf8'), outPath, sqlFile);
}

/** What a `--db` value turned into: the SQLite file to open, and how to clean up after it. */
export interface DatabaseFile {
  /** the SQLite database to open (read-only) */
  readonly path: string;
  /** the file the user named (the database itself, or the .sql script) */
  readonly source: string;
  /** true when `path` was built from a .sql script (in a private temporary folder) */
  readonly fromScript: boolean;
  /** removes the private folder of a built database; does nothing for a database given as is */
  dispose(): void;
}

/**
 * 'sqlite' when the file starts with the SQLite header, 'script' for another file named `*.sql`;
 * else a string saying what is wrong (`no such file; expected …`).
 */
export function databaseKind(file: string): 'sqlite' | 'script' | { problem: string } {
  let fd: number;
  try {
    if (!statSync(file).isFile()) return { problem: 'not a file; expected a SQLite database or a .sql script' };
    fd = openSync(file, 'r');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    return { problem: code === 'ENOENT' ? 'no such file; expected a SQLite database or a .sql script' : `cannot read it (${code ?? (e as Error).message}); expected a readable SQLite database or .sql script` };
  }
  const head = Buffer.alloc(16);
  try {
    const n = readSync(fd, head, 0, 16, 0);
    if (n === 16 && head.toString('latin1') === SQLITE_HEADER) return 'sqlite';
  } finally {
    closeSync(fd);
  }
  if (file.toLowerCase().endsWith('.sql')) return 'script';
  return { problem: 'not a SQLite database (no "SQLite format 3" header) and not a .sql script; expected one of them' };
}

/**
 * Opens the database a user named: a SQLite file is used as it is; a `.sql` script is built into
 * a new file `<tmpdir>/treewright-db-XXXXXX/<name>.sqlite` (folder 0700, file 0600), which
 * `dispose()` removes. Throws an Error naming the file when it is neither.
 */
export function openDatabaseFile(file: string): DatabaseFile {
  const kind = databaseKind(file);
  if (typeof kind === 'object') throw new Error(`${file}: ${kind.problem}`);
  if (kind === 'sqlite') return { path: file, source: file, fromScript: false, dispose: () => undefined };
  const bytes = buildInMemory(readFileSync(file, 'utf8'), file);
  const dir = mkdtempSync(join(tmpdir(), 'treewright-db-'));
  chmodSync(dir, 0o700);
  const path = join(dir, `${basename(file).replace(/\.sql$/i, '')}.sqlite`);
  try {
    writeFileSync(path, bytes, { flag: 'wx', mode: 0o600 });
  } catch (e) {
    rmSync(dir, { recursive: true, force: true });
    throw e;
  }
  let gone = false;
  return {
    path,
    source: file,
    fromScript: true,
    dispose: () => {
      if (gone) return;
      gone = true;
      rmSync(dir, { recursive: true, force: true });
    },
  };
}
