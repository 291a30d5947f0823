/**
 * DEVELOPERS.md stays a map: at most 20 KB, and every `file:line` of its invariant index points at
 * a line that contains the named identifier (so the index cannot silently go stale when code
 * moves). Links to the design notes must resolve.
 */
import { existsSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const DOC = join(ROOT, 'DEVELOPERS.md');
const text = readFileSync(DOC, 'utf8');

interface Entry {
  docLine: number;
  file: string;
  line: number;
  identifier: string;
}

/** Rows `| invariant | `path:line` | `identifier` |` of the "Invariant index" section. */
function invariantIndex(): Entry[] {
  const lines = text.split('\n');
  const start = lines.findIndex((l) => /^## Invariant index\s*$/.test(l));
  if (start < 0) return [];
  const out: Entry[] = [];
  for (let i = start + 1; i < lines.length && !/^## /.test(lines[i]); i++) {
    const m = /^\|.*\|\s*`([^`:]+):(\d+)`\s*\|\s*`([^`]+)`\s*\|\s*$/.exec(lines[i]);
    if (m) out.push({ docLine: i + 1, file: m[1], line: Number(m[2]), identifier: m[3] });
  }
  return out;
}

describe('DEVELOPERS.md', () => {
  it('is at most 20 KB', () => {
    expect(statSync(DOC).size).toBeLessThanOrEqual(20 * 1024);
  });

  const entries = invariantIndex();
  it('has an invariant index', () => {
    expect(entries.length).toBeGreaterThanOrEqual(10);
  });

  it('every file:line of the invariant index exists and names its identifier', () => {
    const problems: string[] = [];
    for (const e of entries) {
      const where = `DEVELOPERS.md:${e.docLine}: ${e.file}:${e.line}`;
      const path = join(ROOT, e.file);
      if (!existsSync(path)) {
        problems.push(`${where}: no such file`);
        continue;
      }
      const src = readFileSync(path, 'utf8').split('\n');
      if (e.line < 1 || e.line > src.length) {
        problems.push(`${where}: the file has ${src.length} lines`);
        continue;
      }
      if (!src[e.line - 1].includes(e.identifier)) {
        const now = src.findIndex((l) => l.includes(e.identifier));
        problems.push(`${where}: line does not contain \`${e.identifier}\`${now >= 0 ? ` (first found at line ${now + 1})` : ' (not found in the file)'}`);
      }
    }
    expect(problems).toEqual([]);
  });

  it('links to files that exist', () => {
    const missing = [...text.matchAll(/\]\(([^)#\s]+)\)/g)]
      .map((m) => m[1])
      .filter((href) => !/^[a-z]+:/.test(href) && !existsSync(join(ROOT, href)));
    expect(missing).toEqual([]);
  });
});
