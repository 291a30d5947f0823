// Fuzz test of the description compiler: seeded random mutations of the four shipped grammars
// (delete a span, duplicate a line, swap two tokens, truncate, insert punctuation; one to three per
// case) must each give a grammar or located errors, never an exception, and each compile must end
// within a second (a hang guard, not a performance test). Inputs kept under
// test/cases/description-fuzz/ are checked the same way.
import { readdirSync, readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { checkInput } from './fuzz-check.ts';
import { randomMutant, rng } from './mutate.ts';

const GRAMMARS = ['arith', 'json', 'lf', 'sql'];
const PER_GRAMMAR = 150; // 600 cases in all
const HANG_GUARD_MS = 1000;

/**
 * Time of one compile; a slow first run is measured once more and the faster run counts, so a
 * shared, loaded machine pausing the process does not look like a hang (a real hang is slow twice).
 * `run` gets the attempt number so the second run can use another file name: compileDescription
 * caches recent (file, text) pairs, and a cache hit must not pass for a fast compile.
 */
function fastestOfTwo(run: (attempt: number) => unknown): number {
  let t0 = performance.now();
  run(0);
  const first = performance.now() - t0;
  if (first <= HANG_GUARD_MS) return first;
  t0 = performance.now();
  run(1);
  return Math.min(first, performance.now() - t0);
}

describe('description fuzz', () => {
  for (const [gi, name] of GRAMMARS.entries()) {
    it(`${PER_GRAMMAR} mutants of ${name}.twg compile or fail with located errors`, () => {
      const text = readFileSync(`grammars/${name}/${name}.twg`, 'utf8');
      const problems: string[] = [];
      let changed = 0;
      for (let i = 0; i < PER_GRAMMAR; i++) {
        const seed = 7_000 + gi * 1_000 + i;
        const m = randomMutant(text, rng(seed));
        if (m.text !== text) changed++;
        let problem: string | null = null;
        const ms = fastestOfTwo((attempt) => (problem = checkInput(m.text, `${name}-mutant-${seed}-${attempt}.twg`)));
        if (problem) problems.push(`seed ${seed} (${m.kinds.join(', ')}): ${problem}`);
        if (ms > HANG_GUARD_MS) problems.push(`seed ${seed} (${m.kinds.join(', ')}): took ${ms.toFixed(0)} ms`);
      }
      expect(problems).toEqual([]);
      // the mutator must actually mutate (a duplicated blank line or a swap of equal tokens may not)
      expect(changed).toBeGreaterThan(PER_GRAMMAR * 0.9);
    }, 120_000);
  }

  const dir = 'test/cases/description-fuzz';
  const kept = readdirSync(dir).filter((f) => f.endsWith('.twg')).sort();
  it('kept inputs exist', () => {
    expect(kept.length).toBeGreaterThan(0);
  });
  for (const f of kept) {
    it(`kept input ${f}`, () => {
      const text = readFileSync(`${dir}/${f}`, 'utf8');
      let problem: string | null = 'not run';
      const ms = fastestOfTwo((attempt) => (problem = checkInput(text, `${f}.${attempt}`)));
      expect(problem).toBeNull();
      expect(ms).toBeLessThan(HANG_GUARD_MS);
    });
  }
});
