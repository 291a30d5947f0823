/**
 * The scope solver against exhaustive enumeration (common practice, no source): on small random
 * relations every subset X of the members not yet introduced is tried, and the smallest valid
 * |X| and "some valid X has lo ≤ |X| ≤ hi" must agree with the solver's answers. Valid: X holds
 * every required member not yet introduced and each unqualified reference has exactly one owner
 * in intro ∪ X (SQLite's rule for unqualified column names, sqlite.org/lang_select.html, "ambiguous
 * column name" — from memory).
 */
import { describe, expect, it } from 'vitest';
import { MANY, Relation, ScopeSolver } from '../../src/automaton/scope-solver.ts';

function rng(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function brute(rel: Relation, intro: number[], required: number[], refs: number[], optional: number[]): { min: number; sizes: Set<number> } {
  const rest: number[] = [];
  for (let t = 0; t < rel.introCount; t++) if (!intro.includes(t)) rest.push(t);
  const sizes = new Set<number>();
  let min = MANY;
  for (let mask = 0; mask < 1 << rest.length; mask++) {
    const s = new Set(intro);
    let k = 0;
    for (let i = 0; i < rest.length; i++) if (mask & (1 << i)) {
      s.add(rest[i]);
      k++;
    }
    if (!required.every((t) => s.has(t))) continue;
    if (!refs.every((r) => [...s].filter((t) => rel.owns(t, r)).length === 1)) continue;
    if (!optional.every((r) => [...s].filter((t) => rel.owns(t, r)).length <= 1)) continue;
    sizes.add(k);
    min = Math.min(min, k);
  }
  return { min, sizes };
}

describe('scope solver', () => {
  it('agrees with enumeration on 3,000 random scopes (half with optional references)', () => {
    const rand = rng(2026);
    let feasibleSeen = 0;
    let infeasibleSeen = 0;
    for (let trial = 0; trial < 3000; trial++) {
      const nIntro = 1 + Math.floor(rand() * 8);
      const nRef = 1 + Math.floor(rand() * 10);
      const pairs: [number, number][] = [];
      for (let r = 0; r < nRef; r++) for (let t = 0; t < nIntro; t++) if (rand() < 0.3) pairs.push([r, t]);
      const rel = new Relation(nRef, nIntro, pairs);
      const solver = new ScopeSolver(rel);
      const intro = [...new Set(Array.from({ length: Math.floor(rand() * 3) }, () => Math.floor(rand() * nIntro)))];
      const required = Array.from({ length: Math.floor(rand() * 2) }, () => Math.floor(rand() * nIntro));
      const refs = Array.from({ length: Math.floor(rand() * 4) }, () => Math.floor(rand() * nRef));
      const optional = trial % 2 === 0 ? [] : Array.from({ length: Math.floor(rand() * 3) }, () => Math.floor(rand() * nRef));
      const want = brute(rel, intro, required, refs, optional);
      expect(solver.minMore(intro, required, refs, optional), JSON.stringify({ pairs, intro, required, refs, optional })).toBe(want.min);
      for (const [lo, hi] of [[0, 0], [0, 1], [1, 1], [0, MANY], [1, MANY], [2, MANY]]) {
        const some = [...want.sizes].some((k) => k >= lo && k <= hi);
        expect(solver.feasible(intro, required, refs, lo, hi, optional), JSON.stringify({ pairs, intro, required, refs, optional, lo, hi })).toBe(some);
      }
      if (want.min < MANY) feasibleSeen++;
      else infeasibleSeen++;
    }
    // both outcomes are exercised
    expect(feasibleSeen).toBeGreaterThan(300);
    expect(infeasibleSeen).toBeGreaterThan(300);
  });

  it('a column in every table is ambiguous once two tables are in scope', () => {
    // tables 0, 1; column 0 ("id") in both, column 1 only in table 1
    const rel = new Relation(2, 2, [[0, 0], [0, 1], [1, 1]]);
    const s = new ScopeSolver(rel);
    expect(s.minMore([0], [], [0])).toBe(0);
    expect(s.minMore([0, 1], [], [0])).toBe(MANY);
    // column 1 needs table 1, which makes column 0 ambiguous together with table 0
    expect(s.minMore([0], [], [0, 1])).toBe(MANY);
    expect(s.minMore([], [], [0, 1])).toBe(1);
  });
});
