// The SQL executor's child process (plain JavaScript so it runs under bare `node`, without the
// TypeScript loader). Started by sql.ts with `fork`; never imported.
//
// Why a process and not a worker thread: better-sqlite3 runs a statement synchronously inside
// native code, and `Worker.terminate()` only takes effect when control returns to JavaScript, so a
// runaway query keeps its thread (and a core) busy and `terminate()` never settles. SIGKILL on a
// child process stops it at once. (Measured here with better-sqlite3 12.11 on Node 20: a worker
// running an endless recursive CTE had not settled `terminate()` after 20 s.)
//
// Protocol (IPC, JSON): the parent sends { id, sql, rowCap, byteCap }; the child answers
// { id, ok: true, columns, rows } (rows as arrays, at most rowCap rows and byteCap bytes) or
// { id, ok: false, error }.
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
// What a query may read (bound by the operator: argv[3] is a JSON list of table names, else every
// table of the database that is not SQLite's own). Checked on the statement's bytecode (EXPLAIN,
// sqlite.org/opcode.html): every OpenRead/ReopenIdx must open the b-tree of an allowed table or of
// an index on one, in the main database; virtual tables (pragma_… table-valued functions, which
// reveal the database path and settings) and SQLite's introspection functions are refused.
// better-sqlite3 exposes no authorizer callback, hence the bytecode check.
const allowedTables = new Set();
const rootPages = new Map();
try {
  const bound = process.argv[3] ? JSON.parse(process.argv[3]) : null;
  const schema = db.prepare('SELECT type, name, tbl_name, rootpage FROM main.sqlite_schema').all();
  for (const r of schema) {
    if (r.type === 'table' && (bound === null ? !r.name.toLowerCase().startsWith('sqlite_') : bound.includes(r.name))) allowedTables.add(r.name);
  }
  for (const r of schema) {
    if ((r.type === 'table' || r.type === 'index') && r.rootpage > 0 && allowedTables.has(r.tbl_name)) rootPages.set(r.rootpage, r.tbl_name);
  }
} catch (err) {
  process.send({ fatal: `cannot read the schema of ${dbPath}: ${err.message}` });
  process.exit(1);
}
process.send({ ready: true });

const FIRST_WORD = /^(?:\s|--[^\n]*\n?|\/\*[\s\S]*?\*\/|\()*([A-Za-z]+)/;
const REFUSED_FUNCTION = /^(sqlite_|load_extension|readfile|writefile|fts3_tokenizer|edit)/i;

/** Why the statement may not run (a message), or null. */
function refusal(sql) {
  const word = (FIRST_WORD.exec(sql)?.[1] ?? '').toUpperCase();
  if (word !== 'SELECT' && word !== 'WITH' && word !== 'VALUES') return `only SELECT statements may run (found ${word || 'no keyword'})`;
  let plan;
  try {
    plan = db.prepare(`EXPLAIN ${sql}`).all();
  } catch (err) {
    return `SQLite could not explain the query: ${err.message}`;
  }
  for (const op of plan) {
    if (op.opcode === 'OpenRead' || op.opcode === 'ReopenIdx' || op.opcode === 'OpenWrite') {
      if (op.p3 !== 0) return 'the query reads another database than the bound one';
      if (!rootPages.has(op.p2)) return op.p2 === 1 ? "the query reads SQLite's schema table, which is not bound for queries" : 'the query reads a table that is not bound for queries';
    } else if (op.opcode.startsWith('V') && /^V(Open|Filter|Column|Next|Update|Begin|Create|Destroy|Check|InitIn|Rename)$/.test(op.opcode)) {
      return 'the query uses a table-valued function or virtual table (pragma_…, json_each, …), which is not allowed';
    } else if ((op.opcode === 'Function' || op.opcode === 'PureFunc') && typeof op.p4 === 'string' && REFUSED_FUNCTION.test(op.p4)) {
      return `the query calls ${op.p4.replace(/\(.*$/, '')}(), which is not allowed`;
    }
  }
  return null;
}

/** Bytes a value takes in the answer (as JSON text, roughly). */
function size(v) {
  if (typeof v === 'string') return Buffer.byteLength(v) + 2;
  return 8;
}

function plain(value) {
  if (typeof value === 'bigint') return Number(value);
  if (Buffer.isBuffer(value)) return `x'${value.toString('hex')}'`;
  return value;
}

process.on('message', (msg) => {
  const { id, sql, rowCap, byteCap } = msg;
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
  const why = refusal(sql);
  if (why !== null) {
    process.send({ id, ok: false, error: why });
    return;
  }
  try {
    stmt.raw(true);
    const columns = stmt.columns().map((c) => c.name);
    const rows = [];
    let bytes = 0;
    for (const row of stmt.iterate()) {
      if (rows.length >= rowCap) {
        process.send({ id, ok: false, error: `the result has more than ${rowCap} rows (row cap)` });
        return;
      }
      const values = row.map(plain);
      for (const v of values) bytes += size(v);
      if (bytes > byteCap) {
        process.send({ id, ok: false, error: `the result is larger than ${byteCap} bytes (size cap)` });
        return;
      }
      rows.push(values);
    }
    process.send({ id, ok: true, columns, rows });
  } catch (err) {
    process.send({ id, ok: false, error: `SQLite failed while running the query: ${err.message}` });
  }
});
