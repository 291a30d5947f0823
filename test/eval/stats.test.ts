import { describe, expect, it } from 'vitest';
import { bignumber, combinations, erf, quantileSeq } from 'mathjs';
import { mcnemarExact, mcnemarPaired, pairedBootstrapDifferences, quantile, wilsonInterval, wilsonRate, Z_95 } from '../../src/eval/stats.ts';

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

describe('wilsonInterval', () => {
  it('uses the two-sided 95% normal quantile: erf(z/√2) = 0.95 (mathjs)', () => {
    // P(|Z| ≤ z) = erf(z/√2) for a standard normal Z (a fact of the trade, no source)
    expect(erf(Z_95 / Math.SQRT2)).toBeCloseTo(0.95, 14);
  });

  it('20 of 20: lower bound 20/(20 + z²) ≈ 83.9%, upper 100% — not the collapsed [100%, 100%]', () => {
    // closed form of the Wilson bound at k = n (algebra on the score interval, no source): n/(n + z²)
    const ci = wilsonInterval(20, 20)!;
    expect(ci.low).toBeCloseTo(20 / (20 + Z_95 * Z_95), 15);
    expect(ci.low.toFixed(4)).toBe('0.8389');
    expect(ci.high).toBe(1);
    // and the mirror image, 0 of 20
    const zero = wilsonInterval(0, 20)!;
    expect(zero.low).toBe(0);
    expect(zero.high).toBeCloseTo(1 - ci.low, 15);
  });

  it("matches the published worked examples of Newcombe (1998), Table I, method 3 (score, no continuity correction)", () => {
    // Newcombe R.G. (1998), "Two-sided confidence intervals for the single proportion: comparison of
    // seven methods", Statistics in Medicine 17:857–872, Table I. Values typed from memory; each
    // agrees with the closed form to the 4 decimals printed there.
    const published: [number, number, string, string][] = [
      [81, 263, '0.2553', '0.3662'],
      [15, 148, '0.0624', '0.1605'],
      [0, 20, '0.0000', '0.1611'],
      [1, 29, '0.0061', '0.1718'],
    ];
    for (const [k, n, low, high] of published) {
      const ci = wilsonInterval(k, n)!;
      expect([ci.low.toFixed(4), ci.high.toFixed(4)], `${k}/${n}`).toEqual([low, high]);
    }
  });

  it('its bounds are where the score test statistic equals z', () => {
    // the definition of the Wilson interval (Wilson 1927): |p̂ − p| = z·sqrt(p(1 − p)/n) at both bounds
    for (const [k, n] of [[3, 17], [12, 40], [399, 400], [1, 2], [250, 440]]) {
      const ci = wilsonInterval(k, n)!;
      for (const p of [ci.low, ci.high]) {
        expect(Math.abs(k / n - p) / Math.sqrt((p * (1 - p)) / n), `${k}/${n} at ${p}`).toBeCloseTo(Z_95, 9);
      }
    }
  });

  it('is null for no items and refuses impossible counts', () => {
    expect(wilsonInterval(0, 0)).toBeNull();
    expect(() => wilsonInterval(5, 4)).toThrow('wilsonInterval: expected whole numbers 0 ≤ successes ≤ n, found 5 of 4');
    expect(() => wilsonInterval(1.5, 4)).toThrow('found 1.5 of 4');
  });

  it('wilsonRate counts the outcomes and names its method', () => {
    const ci = wilsonInterval(3, 4)!;
    expect(wilsonRate([true, false, true, true])).toEqual({ rate: 0.75, ci_low: ci.low, ci_high: ci.high, n: 4, ci_method: 'wilson-score' });
    expect(wilsonRate([])).toEqual({ rate: null, ci_low: null, ci_high: null, n: 0, ci_method: 'wilson-score' });
  });
});

describe('pairedBootstrapDifferences', () => {
  const n = 400;
  // unconstrained right on 80% of items; constrained also right on 30 of the items it got wrong,
  // and wrong on 6 it got right: b = 6, c = 30 discordant pairs
  const first = Array.from({ length: n }, (_, i) => i % 5 !== 0);
  const second = first.map((x, i) => (x ? !(i % 5 === 1 && i < 30) : i < 150));

  it('is deterministic for a seed, and its estimate is the difference of the rates', () => {
    const [a] = pairedBootstrapDifferences([first], [second]);
    const [b] = pairedBootstrapDifferences([first], [second]);
    expect(a).toEqual(b);
    const rate = (xs: boolean[]) => xs.filter(Boolean).length / xs.length;
    expect(a.estimate).toBeCloseTo(rate(second) - rate(first), 15);
    expect(a.estimate).toBeCloseTo(24 / 400, 15);
    expect(a).toMatchObject({ n, discordant: 36, ci_method: 'paired-percentile-bootstrap', resamples: 2000, seed: 20261201 });
    expect(a.ci_low!).toBeLessThan(a.estimate!);
    expect(a.ci_high!).toBeGreaterThan(a.estimate!);
  });

  it('has about the normal-approximation width of a paired difference', () => {
    // common practice, no source: the variance of the mean paired difference is
    // ((b + c) − (c − b)²/n) / n², and a percentile interval is close to ±1.96 of its root for large n
    const [d] = pairedBootstrapDifferences([first], [second]);
    const [b, c] = [6, 30];
    const se = Math.sqrt(b + c - (c - b) ** 2 / n) / n;
    expect(Math.abs(d.ci_high! - d.ci_low! - 2 * 1.96 * se)).toBeLessThan(0.15 * 2 * 1.96 * se);
  });

  it('gives no interval when no item differs, and nulls for no items', () => {
    const same = Array.from({ length: 50 }, (_, i) => i % 3 === 0);
    expect(pairedBootstrapDifferences([same], [same])[0]).toMatchObject({ estimate: 0, ci_low: null, ci_high: null, n: 50, discordant: 0 });
    expect(pairedBootstrapDifferences([[]], [[]])[0]).toMatchObject({ estimate: null, ci_low: null, ci_high: null, n: 0, discordant: 0 });
  });

  it('uses one set of resamples for every measure of a call', () => {
    const [x, y] = pairedBootstrapDifferences([first, first], [second, second]);
    expect(x).toEqual(y);
    expect(() => pairedBootstrapDifferences([first], [second.slice(1)])).toThrow('paired differences need 400 pairs per measure, got 400 and 399');
  });
});
