/**
 * The project's layout rule: the top level of the repository holds only the package's own files —
 * package.json, package-lock.json, tsconfig.json, README.md, DEVELOPERS.md — the folders src,
 * grammars, models, test and docs, and dot-files/dot-folders (.build: build and generator scripts;
 * .ci: the CI entry). Checked on what git tracks, so build output (dist/) and node_modules/, both
 * ignored, do not count.
 */
import { execFileSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';

const ALLOWED = new Set(['package.json', 'package-lock.json', 'tsconfig.json', 'README.md', 'DEVELOPERS.md', 'src', 'grammars', 'models', 'test', 'docs']);

describe('top level of the repository', () => {
  it('holds only the package files, the five folders and dot-files', () => {
    const tracked = execFileSync('git', ['ls-files', '-z'], { encoding: 'utf8' }).split('\0').filter((f) => f !== '');
    const top = [...new Set(tracked.map((f) => f.split('/')[0]!))];
    expect(top.length).toBeGreaterThan(5);
    expect(top.filter((e) => !ALLOWED.has(e) && !e.startsWith('.')).sort()).toEqual([]);
  });
});
