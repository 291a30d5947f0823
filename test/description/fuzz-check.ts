/**
 * The property every description input must satisfy: compileDescription returns a grammar or at
 * least one error, every diagnostic is located inside the text (`file:line:col` with the line and
 * column within the text), and nothing throws. Returns a problem description or null.
 */
import { compileDescription, formatDiagnostic } from '../../src/description/index.ts';

export function checkInput(text: string, file: string): string | null {
  let result;
  try {
    result = compileDescription(text, file);
  } catch (e) {
    return `threw: ${(e as Error).stack ?? String(e)}`;
  }
  const { grammar, diagnostics } = result;
  if (!grammar && !diagnostics.some((d) => d.severity === 'error')) return 'no grammar and no error';
  if (grammar && diagnostics.some((d) => d.severity === 'error')) return 'a grammar together with errors';
  const lines = text.split('\n');
  for (const d of diagnostics) {
    const head = formatDiagnostic(d, text).split('\n')[0]!;
    const m = /^(.*):(\d+):(\d+): (error|warning): \S/.exec(head);
    if (!m || m[1] !== file) return `unlocated diagnostic: ${head}`;
    const line = Number(m[2]);
    const col = Number(m[3]);
    if (line < 1 || line > lines.length) return `line ${line} outside the text: ${head}`;
    if (col < 1 || col > lines[line - 1]!.length + 1) return `column ${col} outside line ${line}: ${head}`;
    if (d.span.start < 0 || d.span.end > text.length || d.span.end < d.span.start) return `bad span ${d.span.start}-${d.span.end}: ${head}`;
  }
  return null;
}
