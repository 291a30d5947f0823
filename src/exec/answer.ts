/**
 * One short, one-line rendering of an executor's answer, shared by the demo, the CLI and the
 * evaluation report: LF sets as `{a, b, … 3 more}`, numbers and truth values as themselves, a SQL
 * result with one cell as that cell, other SQL results as `N rows: a | b; c | d; …`, anything else
 * as JSON (clipped to 200 characters).
 */
import type { ExecResult } from './types.ts';

/** Formats an answer value (the `value` of an `{ ok: true }` result). */
export function formatAnswer(v: unknown): string {
  if (v === null || v === undefined) return '–';
  if (typeof v === 'object') {
    const o = v as Record<string, unknown>;
    if ((o.type === 'set' || o.type === 'best') && Array.isArray(o.members)) {
      const m = o.members as string[];
      return `{${m.slice(0, 8).join(', ')}${m.length > 8 ? `, … ${m.length - 8} more` : ''}}`;
    }
    if (o.type === 'number') return String(o.value);
    if (o.type === 'truth') return o.value ? 'yes' : 'no';
    if (Array.isArray(o.rows)) {
      const rows = o.rows as unknown[][];
      if (rows.length === 1 && Array.isArray(rows[0]) && rows[0].length === 1) return String(rows[0][0]);
      const shown = rows.slice(0, 5).map((r) => r.map((x) => String(x)).join(' | '));
      return `${rows.length} row${rows.length === 1 ? '' : 's'}${rows.length === 0 ? '' : `: ${shown.join('; ')}`}${rows.length > 5 ? '; …' : ''}`;
    }
  }
  const s = JSON.stringify(v) ?? String(v);
  return s.length > 200 ? s.slice(0, 197) + '...' : s;
}

/** Formats a whole result: the answer, or `error: …`. */
export function formatResult(result: ExecResult): string {
  return result.ok ? formatAnswer(result.value) : `error: ${result.error}`;
}
