/**
 * The figures file (src/cli/figures.ts): a section is replaced as a whole, others are kept, and the
 * JSON written into a section reads back unchanged.
 */
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { machine, readFiguresSection, writeFiguresSection } from '../../src/cli/figures.ts';

describe('figures file', () => {
  it('replaces one section and keeps the others', () => {
    const file = join(mkdtempSync(join(tmpdir(), 'tw-figures-')), 'figures.md');
    const m = machine();
    writeFiguresSection({ id: 'a', title: 'A', command: 'treewright bench --all', body: '| x |\n|---|\n| 1 |', data: { x: 1 }, machine: m }, file);
    writeFiguresSection({ id: 'b', title: 'B', command: 'treewright bench --decode', body: 'b body', data: [{ y: 2 }], machine: m }, file);
    writeFiguresSection({ id: 'a', title: 'A again', command: 'treewright bench --all', body: 'new a', data: { x: 3 }, machine: m }, file);
    const text = readFileSync(file, 'utf8');
    expect(text.match(/<!-- figures:a -->/g)).toHaveLength(1);
    expect(text).toContain('## A again');
    expect(text).not.toContain('| 1 |');
    expect(text.indexOf('figures:a -->')).toBeLessThan(text.indexOf('figures:b -->')); // order kept
    expect(readFiguresSection('a', file)).toEqual({ machine: m, command: 'treewright bench --all', results: { x: 3 } });
    expect(readFiguresSection('b', file)?.results).toEqual([{ y: 2 }]);
    expect(readFiguresSection('c', file)).toBeNull();
  });

  it('records the date, the machine and the load average', () => {
    const m = machine();
    expect(m.date).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ$/);
    expect(m.cores).toBeGreaterThanOrEqual(1);
    expect(m.node).toBe(process.version);
    expect(m.load_average).toHaveLength(3);
  });

  it('refuses a section id that would break the markers', () => {
    expect(() => writeFiguresSection({ id: 'a -->', title: '', command: '', body: '', data: null, machine: machine() }, join(tmpdir(), 'never.md'))).toThrow(/expected letters/);
  });
});
