/**
 * Statistics for an evaluation: rates with percentile-bootstrap confidence intervals, McNemar's
 * exact test on paired outcomes, and latency quantiles.
 *
 * - Bootstrap: 2000 resamples by default (common practice, no source, for 95% percentile
 *   intervals), drawn with pure-rand's xoroshiro128+ from a fixed seed, so the same rows always
 *   give the same interval. Each resample draws n items with replacement; the interval is the
 *   2.5th and 97.5th percentiles of the resampled rates (linear interpolation between order
 *   statistics).
 * - McNemar's exact test: two-sided, conditional on the discordant pairs b + c; under the null each
 *   discordant pair goes either way with probability 1/2, so p = min(1, 2·P(X ≤ min(b, c))) with
 *   X ~ Binomial(b + c, 1/2), and p = 1 when there are no discordant pairs.
 * - Quantiles: linear interpolation between order statistics (h = (n − 1)·q).
 * Cost: bootstrap O(resamples · n) draws; everything else O(n log n) at most.
 */
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { uniformInt } from 'pure-rand/distribution/uniformInt';

export interface RateCI {
  /** successes / n; null when n = 0 */
  readonly rate: number | null;
  readonly ci_low: number | null;
  readonly ci_high: number | null;
  readonly n: number;
}

export const BOOTSTRAP_RESAMPLES = 2000;
export const BOOTSTRAP_SEED = 20261201;

/** Quantile `q` in [0, 1] of `values` by linear interpolation; null for an empty list. */
export function quantile(values: readonly number[], q: number): number | null {
  if (values.length === 0) return null;
  const sorted = Float64Array.from(values).sort();
  return quantileSorted(sorted, q);
}

function quantileSorted(sorted: Float64Array, q: number): number {
  const h = (sorted.length - 1) * q;
  const lo = Math.floor(h);
  const hi = Math.min(sorted.length - 1, lo + 1);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

/** The rate of `true` in `outcomes` with a 95% percentile-bootstrap interval. */
export function bootstrapRate(
  outcomes: readonly boolean[],
  resamples = BOOTSTRAP_RESAMPLES,
  seed = BOOTSTRAP_SEED,
): RateCI {
  const n = outcomes.length;
  if (n === 0) return { rate: null, ci_low: null, ci_high: null, n: 0 };
  const bits = Uint8Array.from(outcomes, (b) => (b ? 1 : 0));
  let k = 0;
  for (let i = 0; i < n; i++) k += bits[i];
  const rng = xoroshiro128plus(seed);
  const rates = new Float64Array(resamples);
  for (let r = 0; r < resamples; r++) {
    let s = 0;
    for (let i = 0; i < n; i++) s += bits[uniformInt(rng, 0, n - 1)];
    rates[r] = s / n;
  }
  rates.sort();
  return { rate: k / n, ci_low: quantileSorted(rates, 0.025), ci_high: quantileSorted(rates, 0.975), n };
}

/**
 * McNemar's exact two-sided p-value from the discordant counts: `b` pairs where only the first
 * condition succeeded, `c` where only the second did.
 */
export function mcnemarExact(b: number, c: number): number {
  const n = b + c;
  if (n === 0) return 1;
  const k = Math.min(b, c);
  // P(X ≤ k) for X ~ Binomial(n, 1/2), summed in log space so large n does not underflow
  const logHalfN = -n * Math.LN2;
  let logC = 0; // log C(n, 0)
  let tail = 0;
  for (let i = 0; i <= k; i++) {
    if (i > 0) logC += Math.log(n - i + 1) - Math.log(i);
    tail += Math.exp(logC + logHalfN);
  }
  return Math.min(1, 2 * tail);
}

/** McNemar's exact p for paired boolean outcomes (same items, two conditions). */
export function mcnemarPaired(first: readonly boolean[], second: readonly boolean[]): { p: number; b: number; c: number; n: number } {
  if (first.length !== second.length) throw new Error(`McNemar needs paired outcomes, got ${first.length} and ${second.length}`);
  let b = 0;
  let c = 0;
  for (let i = 0; i < first.length; i++) {
    if (first[i] && !second[i]) b++;
    else if (!first[i] && second[i]) c++;
  }
  return { p: mcnemarExact(b, c), b, c, n: first.length };
}
