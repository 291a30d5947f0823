/**
 * The results log: a JSONL file that an evaluation appends to as rows are produced, and that a
 * restarted run reads to continue where the last one stopped.
 *
 * Durability: each row is one `appendFileSync` of a whole line followed by `fsyncSync`, so after
 * a kill at any moment the file holds complete rows plus at most one torn last line (a prefix of a
 * row, without its newline). Opening the log truncates such a torn line away; the row it held is
 * produced again. Rows are keyed by `id` + `mode`; a key already in the file is never written again.
 * An unparsable line anywhere but at the end is an error (the file was edited), naming the line.
 * The owner may pass a row check (e.g. the evaluation's, which refuses rows written under older
 * field names); its error is prefixed with `file:line:1: `.
 */
import { closeSync, existsSync, fsyncSync, openSync, readFileSync, truncateSync, writeSync } from 'node:fs';

export interface KeyedRow {
  readonly id: string;
  readonly mode: string;
}

export function rowKey(row: KeyedRow): string {
  return `${row.id}\u0000${row.mode}`;
}

/** Checks one parsed row; throws an Error whose message says what is wrong (the log adds where). */
export type RowCheck = (row: Readonly<Record<string, unknown>>) => void;

export class ResultsLog<Row extends KeyedRow> {
  readonly path: string;
  readonly rows: Row[] = [];
  private readonly keys = new Set<string>();
  /** bytes removed from a torn last line when the log was opened (0 if none) */
  readonly repairedBytes: number;
  private fd: number;

  constructor(path: string, check?: RowCheck) {
    this.path = path;
    let repaired = 0;
    if (existsSync(path)) {
      const buf = readFileSync(path);
      const lastNl = buf.lastIndexOf(0x0a);
      const keep = lastNl + 1;
      if (keep < buf.length) {
        repaired = buf.length - keep;
        truncateSync(path, keep);
      }
      const text = buf.subarray(0, keep).toString('utf8');
      const lines = text.split('\n');
      for (let i = 0; i < lines.length - 1; i++) {
        const line = lines[i];
        if (line.trim() === '') continue;
        let row: Row;
        try {
          row = JSON.parse(line) as Row;
        } catch (err) {
          throw new Error(`${path}:${i + 1}:1: expected a JSON object per line (${(err as Error).message})`);
        }
        if (typeof row !== 'object' || row === null || typeof row.id !== 'string' || typeof row.mode !== 'string') {
          throw new Error(`${path}:${i + 1}:1: expected an object with string "id" and "mode"`);
        }
        if (check) {
          try {
            check(row as unknown as Record<string, unknown>);
          } catch (err) {
            throw new Error(`${path}:${i + 1}:1: ${(err as Error).message}`);
          }
        }
        const key = rowKey(row);
        if (this.keys.has(key)) throw new Error(`${path}:${i + 1}:1: row for id ${JSON.stringify(row.id)} mode ${row.mode} appears twice`);
        this.keys.add(key);
        this.rows.push(row);
      }
    }
    this.repairedBytes = repaired;
    this.fd = openSync(path, 'a');
  }

  has(id: string, mode: string): boolean {
    return this.keys.has(rowKey({ id, mode }));
  }

  /** Appends one row durably; a row whose key is already present is refused. */
  append(row: Row): void {
    const key = rowKey(row);
    if (this.keys.has(key)) throw new Error(`${this.path}: row for id ${JSON.stringify(row.id)} mode ${row.mode} is already written`);
    const line = Buffer.from(JSON.stringify(row) + '\n', 'utf8');
    // one write call for the whole line; loop only if the OS writes it partially
    let off = 0;
    while (off < line.length) off += writeSync(this.fd, line, off, line.length - off);
    fsyncSync(this.fd);
    this.keys.add(key);
    this.rows.push(row);
  }

  close(): void {
    if (this.fd >= 0) {
      closeSync(this.fd);
      this.fd = -1;
    }
  }
}
