/**
 * Source positions. Every stage stores positions as UTF-16 offsets (a `Span`); line and column are
 * computed here, only when a message is printed.
 */

/** A half-open range of UTF-16 offsets into a source text (a description, a schema, a program). */
export interface Span {
  readonly start: number;
  readonly end: number;
}

/** 1-based line and column of `offset` in `text` (column counts UTF-16 units; offsets past the end clamp). */
export function lineColumn(text: string, offset: number): { line: number; column: number } {
  const end = Math.max(0, Math.min(offset, text.length));
  let line = 1;
  let lineStart = 0;
  for (let i = 0; i < end; i++) {
    if (text.charCodeAt(i) === 10 /* \n */) {
      line++;
      lineStart = i + 1;
    }
  }
  return { line, column: end - lineStart + 1 };
}

/** Longest excerpt line shown; longer lines are clipped around the column with `…`. */
export const EXCERPT_WIDTH = 160;

/**
 * A two-line excerpt for `span`: the numbered source line that holds `span.start`, and a marker
 * line with `^` under the first character and `~` under the rest of the span (clipped to the line).
 * Tabs in the source line are copied into the marker's padding so the marker lines up.
 *
 *   12 | sort Expr {
 *      |      ^~~~
 */
export function excerpt(text: string, span: Span): string {
  const start = Math.max(0, Math.min(span.start, text.length));
  const { line } = lineColumn(text, start);
  let lineStart = text.lastIndexOf('\n', start - 1) + 1;
  let lineEnd = text.indexOf('\n', start);
  if (lineEnd < 0) lineEnd = text.length;
  let source = text.slice(lineStart, lineEnd);
  if (source.endsWith('\r')) {
    source = source.slice(0, -1);
    lineEnd--;
  }
  // a long line (a minified program, a hostile request) is shown as a window around the column,
  // so a message never grows with the input
  if (source.length > EXCERPT_WIDTH) {
    const from = Math.max(lineStart, Math.min(start - 60, lineEnd - EXCERPT_WIDTH));
    const to = Math.min(lineEnd, from + EXCERPT_WIDTH);
    source = (from > lineStart ? '…' : '') + text.slice(from, to) + (to < lineEnd ? '…' : '');
    lineStart = from - (from > lineStart ? 1 : 0);
    lineEnd = to;
  }
  const end = Math.max(start + 1, Math.min(span.end, lineEnd));
  let pad = '';
  for (let i = lineStart; i < start; i++) pad += text[i] === '\t' ? '\t' : ' ';
  const marker = '^' + '~'.repeat(Math.max(0, end - start - 1));
  const number = String(line);
  const gutter = ' '.repeat(number.length);
  return `${number} | ${source}\n${gutter} | ${pad}${marker}`;
}
