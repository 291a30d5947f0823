// The SQL executor's child process (plain JavaScript so it runs under bare `node`, without the
// TypeScript loader). Started by sql.ts with `fork`; never imported.
//
// Why a process and not a worker thread: better-sqlite3 runs a statement synchronously inside
// native code, and `Worker.terminate()` only takes effect when control returns to JavaScript, so a
// runaway query keeps its thread (and a core) busy and `terminate()` never settles. SIGKILL on a
// child process stops it at once. (Measured here with better-sqlite3 12.11 on Node 20: a worker
// running an endless recursive CTE had not settled `terminate()` after 20 s.)
//
// Protocol (IPC, JSON): the parent sends { id, sql, rowCap }; the child answers
// { id, ok: true, columns, rows } (rows as arrays, at most rowCap) or { id, ok: false, error }.
// On start it answers { ready: true } or { fatal: message }.
import Database from 'better-sqlite3';

const dbPath = process.argv[2];
let db;
try {
  db = new Database(dbPath, { readonly: true, fileMustExist: true });
} catch (err) {
  process.send({ fatal: `cannot open ${dbPath} read-only: ${err.message}` });
  process.exit(1);
}
process.send({ ready: true });

function plain(value) {
  if (typeof value === 'bigint') return Number(value);
  if (Buffer.isBuffer(value)) return `x'${value.toString('hex')}'`;
  return value;
}

process.on('message', (msg) => {
  const { id, sql, rowCap } = msg;
  let stmt;
  try {
    stmt = db.prepare(sql);
  } catch (err) {
    process.send({ id, ok: false, error: `SQLite rejected the query: ${err.message}` });
    return;
  }
  if (!stmt.reader || !stmt.readonly) {
    process.send({ id, ok: false, error: 'only a read-only statement that returns rows may run' });
    return;
  }
  try {
    stmt.raw(true);
    const columns = stmt.columns().map((c) => c.name);
    const rows = [];
    for (const row of stmt.iterate()) {
      if (rows.length >= rowCap) {
        process.send({ id, ok: false, error: `the result has more than ${rowCap} rows (row cap)` });
        return;
      }
      rows.push(row.map(plain));
    }
    process.send({ id, ok: true, columns, rows });
  } catch (err) {
    process.send({ id, ok: false, error: `SQLite failed while running the query: ${err.message}` });
  }
});
