/**
 * Builds a SQLite file from a SQL script (schema and rows), e.g. the demo cooperative in
 * grammars/sql/coop.sql. The file is written afresh each time (an existing file is replaced).
 */
import Database from 'better-sqlite3';
import { existsSync, mkdirSync, readFileSync, renameSync, rmSync } from 'node:fs';
import { dirname } from 'node:path';

/** Runs `script` (the text of a .sql file) into a new SQLite file at `outPath`. */
export function buildSqliteFile(script: string, outPath: string, scriptName = 'the SQL script'): void {
  mkdirSync(dirname(outPath), { recursive: true });
  const tmp = `${outPath}.${process.pid}.tmp`;
  rmSync(tmp, { force: true });
  const db = new Database(tmp);
  try {
    db.exec(script);
  } catch (err) {
    db.close();
    rmSync(tmp, { force: true });
    throw new Error(`${scriptName}: SQLite could not run the script: ${(err as Error).message}`);
  }
  db.close();
  renameSync(tmp, outPath);
}

/** Reads a .sql script and builds `outPath` from it. */
export function buildSqliteFileFrom(sqlFile: string, outPath: string): void {
  if (!existsSync(sqlFile)) throw new Error(`${sqlFile}: no such file (expected a SQL script of CREATE TABLE and INSERT statements)`);
  buildSqliteFile(readFileSync(sqlFile, 'utf8'), outPath, sqlFile);
}
