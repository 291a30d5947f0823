import { describe, expect, it } from 'vitest';
import { bignumber, combinations, quantileSeq } from 'mathjs';
import { bootstrapRate, mcnemarExact, mcnemarPaired, quantile } from '../../src/eval/stats.ts';

/** Exact two-sided McNemar p with arbitrary-precision binomial coefficients (mathjs BigNumber). */
function referenceMcNemar(b: number, c: number): number {
  const n = b + c;
  const k = Math.min(b, c);
  let tail = bignumber(0);
  for (let i = 0; i <= k; i++) tail = tail.plus(combinations(bignumber(n), bignumber(i)) as never);
  const p = tail.times(2).div(bignumber(2).pow(n));
  return Math.min(1, p.toNumber());
}

describe('mcnemarExact', () => {
  it('matches a closed-form binomial sum: b=1, c=9 gives 2·(1+10)/2^10', () => {
    // arithmetic: P(X ≤ 1) for X ~ Bin(10, 1/2) = (C(10,0) + C(10,1)) / 1024 = 11/1024
    expect(mcnemarExact(1, 9)).toBeCloseTo(22 / 1024, 15);
  });

  it('matches the published worked example b=1, c=7 → p ≈ 0.070', () => {
    // from memory: Fagerland, Lydersen & Laake (2013), "The McNemar test for binary matched-pairs
    // data: mid-p and asymptotic are better than exact conditional", BMC Med Res Methodol 13:91 —
    // airway hyper-responsiveness example, exact conditional p = 0.070. Closed form: 2·9/256.
    expect(mcnemarExact(1, 7)).toBeCloseTo(18 / 256, 15);
    expect(mcnemarExact(1, 7).toFixed(3)).toBe('0.070');
  });

  it('equals an arbitrary-precision binomial sum (mathjs BigNumber) on a grid, incl. large n', () => {
    for (const [b, c] of [[0, 0], [0, 1], [3, 3], [5, 12], [40, 25], [120, 80], [300, 260], [0, 50]]) {
      const want = b + c === 0 ? 1 : referenceMcNemar(b, c);
      expect(Math.abs(mcnemarExact(b, c) - want), `${b},${c}`).toBeLessThan(1e-12 * Math.max(1, want) + 1e-300);
    }
  });

  it('is symmetric and capped at 1', () => {
    expect(mcnemarExact(4, 4)).toBe(1);
    expect(mcnemarExact(12, 5)).toBe(mcnemarExact(5, 12));
  });

  it('counts discordant pairs from paired outcomes', () => {
    const a = [true, true, false, false, true, true];
    const b = [true, false, false, true, false, false];
    expect(mcnemarPaired(a, b)).toEqual({ p: mcnemarExact(3, 1), b: 3, c: 1, n: 6 });
  });
});

describe('quantile', () => {
  it('agrees with mathjs quantileSeq (linear interpolation)', () => {
    const xs = [12, 3, 7.5, 100, 41, 41, 2, 9, 18, 33, 5];
    for (const q of [0, 0.05, 0.5, 0.9, 0.95, 1]) {
      expect(quantile(xs, q)).toBeCloseTo(quantileSeq(xs, q) as number, 12);
    }
    expect(quantile([], 0.5)).toBeNull();
  });
});

describe('bootstrapRate', () => {
  it('is deterministic for a seed and brackets the rate', () => {
    const outcomes = Array.from({ length: 200 }, (_, i) => i % 10 < 7);
    const a = bootstrapRate(outcomes);
    const b = bootstrapRate(outcomes);
    expect(a).toEqual(b);
    expect(a.rate).toBe(0.7);
    expect(a.n).toBe(200);
    expect(a.ci_low!).toBeLessThan(0.7);
    expect(a.ci_high!).toBeGreaterThan(0.7);
  });

  it('has about the normal-approximation width for a large sample', () => {
    // common practice, no source: for a proportion the bootstrap percentile interval is close to
    // p ± 1.96·sqrt(p(1−p)/n) when n is large and p is away from 0 and 1
    const n = 400;
    const outcomes = Array.from({ length: n }, (_, i) => i % 5 !== 0); // p = 0.8
    const r = bootstrapRate(outcomes);
    const half = 1.96 * Math.sqrt((0.8 * 0.2) / n);
    expect(Math.abs(r.ci_high! - r.ci_low! - 2 * half)).toBeLessThan(0.25 * 2 * half);
  });

  it('gives a zero-width interval when every outcome is the same, and nulls for no data', () => {
    expect(bootstrapRate([true, true, true])).toEqual({ rate: 1, ci_low: 1, ci_high: 1, n: 3 });
    expect(bootstrapRate([])).toEqual({ rate: null, ci_low: null, ci_high: null, n: 0 });
  });
});
