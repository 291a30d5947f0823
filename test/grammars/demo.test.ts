/**
 * The demo (`npm run demo`) on the shipped grammars: it runs to the end, its parse-and-print part
 * gives the canonical text, the rows SQLite returns for it, and located errors for the broken
 * programs.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { compactJson, runDemo } from '../../src/cli/commands/demo.ts';
import { coopDatabase } from './support.ts';

describe('demo', () => {
  it('runs every section and exits 0', { timeout: 120_000 }, async () => {
    const out: string[] = [];
    const code = await runDemo((line) => out.push(line));
    const text = out.join('\n');
    const lines = text.split('\n');
    expect(code, text).toBe(0);
    for (const title of ['1. Check', '2. Sample', '3. Parse and print', '4. Errors']) {
      expect(lines.some((l) => l.startsWith(title)), title).toBe(true);
    }
    const printed =
      'SELECT name, hectares FROM orchards WHERE altitude_m > 300 AND NOT planted_year < 1990 ORDER BY hectares DESC LIMIT 3';
    expect(lines).toContain(`printed ${printed}`);
    // the rows shown are the rows SQLite gives for the printed program
    const rows = coopDatabase().prepare(printed).all() as Record<string, unknown>[];
    expect(rows.length).toBe(3);
    const first = lines.findIndex((l) => l.startsWith('rows '));
    const shown = lines.slice(first, first + 3);
    expect(shown.map((l) => l.slice(8))).toEqual(rows.map((r) => JSON.stringify(r)));
    // every broken program is reported with its file, line and column
    for (const file of ['broken.sql', 'broken.lf', 'broken.json']) {
      expect(lines.some((l) => new RegExp(`^${file.replace('.', '\\.')}:1:\\d+: `).test(l)), file).toBe(true);
    }
    // the model part: five questions, each decoded both ways; every constrained output shown is
    // valid (the guarantee), and these five are also well-typed and executed, whatever the
    // unconstrained one did; verdicts use the measures' names
    const constrained = lines.flatMap((l, i) => (l.trimStart().startsWith('constrained ') ? [i] : []));
    expect(constrained.length).toBe(5);
    expect(lines.filter((l) => /^\s+not valid — <output>:1:\d+: /.test(l)).length).toBeGreaterThan(0);
    for (const i of constrained) {
      expect(lines[i + 1], lines[i]).toMatch(/^\s+valid, well-typed \(/);
      expect(lines[i + 2], lines[i]).toMatch(/^\s+answer: /);
    }
    // Q1's gold SQL run by SQLite itself (the outside reference) gives the count the demo shows
    const q1 = lines.findIndex((l) => l.startsWith('Q1 '));
    const gold = lines[q1 + 1].replace(/^\s+gold \(sql\)\s+/, '');
    const count = coopDatabase().prepare(gold).pluck().get();
    expect(lines.slice(q1, q1 + 8).filter((l) => l.trim() === `answer: ${count}`).length).toBeGreaterThanOrEqual(1);
    // every sampled SQL program is shown with SQLite's verdict
    const verdicts = lines.filter((l) => l.startsWith('    SQLite: '));
    expect(verdicts.length).toBe(4);
    // it says why the questions were picked, and what the timing line means
    expect(text).toContain('were picked because the bare model writes invalid');
    expect(text).toContain('"masks" the time spent computing the allowed');
    // the shipped evaluation's figures, as its metrics.json files give them (never typed)
    for (const target of ['sql', 'lf']) {
      const m = JSON.parse(readFileSync(`models/coop/eval/${target}/metrics.json`, 'utf8'));
      for (const split of ['test', 'compositional']) {
        for (const mode of ['unconstrained', 'constrained']) {
          const r = m[split][mode];
          const want = ['valid', 'well_typed', 'executable', 'execution_accuracy'].map((k) => `${(100 * r[k].rate).toFixed(1)} %`);
          const row = lines.find((l) => new RegExp(`^\\s+${target}\\s+${split} \\(${r.valid.n}\\)\\s+${mode}\\s`).test(l));
          expect(row, `${target} ${split} ${mode}`).toBeDefined();
          expect(row!.trim().split(/\s{2,}/).slice(3)).toEqual(want);
        }
      }
      // the summary's sentences carry the same figures (never typed)
      const p = (mode: string, k: string) => `${(100 * m.compositional[mode][k].rate).toFixed(1)} %`;
      expect(lines).toContain(
        `  ${target}: executable ${p('unconstrained', 'executable')} → ${p('constrained', 'executable')}, ` +
          `right answers (execution_accuracy) ${p('unconstrained', 'execution_accuracy')} → ${p('constrained', 'execution_accuracy')}`,
      );
      const wellTyped = ['test', 'compositional'].map((s) => m[s].constrained.well_typed.rate);
      if (wellTyped.every((r) => r === 1)) expect(lines).toContain(`${target}: every constrained output is also well-typed.`);
      else expect(lines.some((l) => l.startsWith(`${target}: well-typed with the masks ${(100 * wellTyped[0]!).toFixed(1)} % (test)`))).toBe(true);
    }
    // no sentence claims more than the figures: the shipped LF run is not well-typed throughout
    expect(text).not.toContain('always parse and are well-typed');
  });

  it('compactJson keeps short values on one line and breaks long ones', () => {
    expect(compactJson({ a: [1, 2], b: null }, 40)).toBe('{"a":[1,2],"b":null}');
    expect(compactJson({ kind: 'x', items: [{ kind: 'y', v: 'a long string value here' }] }, 50)).toBe(
      '{\n  "kind": "x",\n  "items": [\n    {"kind":"y","v":"a long string value here"}\n  ]\n}',
    );
    // breaking is lossless
    const value = { kind: 'select', items: [{ kind: 'star' }], where: { kind: 'and', left: { n: 1 }, right: { n: [2, 3] } } };
    expect(JSON.parse(compactJson(value, 10))).toEqual(value);
  });
});
