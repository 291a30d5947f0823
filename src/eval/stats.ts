/**
 * Statistics for an evaluation: rates with Wilson score intervals, differences between the two
 * modes with a paired percentile bootstrap, McNemar's exact test on paired outcomes, and latency
 * quantiles.
 *
 * - One rate (k successes of n items): the Wilson score interval at 95% — the set of proportions p
 *   that a two-sided score test at the 5% level does not reject, |p̂ − p| ≤ z·sqrt(p(1 − p)/n)
 *   (Wilson 1927, "Probable inference, the law of succession, and statistical inference", JASA
 *   22:209–212). Why Wilson rather than Clopper–Pearson: both stay meaningful at 0/n and n/n (20/20
 *   gives [83.9%, 100%], not the [100%, 100%] a percentile bootstrap gives); Clopper–Pearson
 *   guarantees at least 95% coverage and so is wider than needed (its real coverage is often near
 *   98–99% for the sample sizes of an evaluation), while Wilson's coverage is close to 95% on
 *   average, it has a closed form (no beta quantiles), and it is among the intervals Brown, Cai &
 *   DasGupta (2001, Statistical Science 16:101–133) recommend. Limitation: for n below ~30 and a
 *   rate very near 0 or 1 its coverage can dip a few points below 95% at some values of p.
 * - The difference between modes (constrained − unconstrained on the items decoded in both): a
 *   paired percentile bootstrap, 2000 resamples (common practice, no source, for 95% percentile
 *   intervals) drawn with pure-rand's xoroshiro128+ from a fixed seed, so the same rows always
 *   give the same interval. Each resample draws n items with replacement and takes the difference
 *   of the two modes' rates on them; the interval is the 2.5th and 97.5th percentiles (linear
 *   interpolation between order statistics). It only sees the items on which the modes disagree
 *   (the discordant pairs): with none it has no spread at all, so no interval is given (null), and
 *   with few it is too narrow — read McNemar's p beside it.
 * - McNemar's exact test: two-sided, conditional on the discordant pairs b + c; under the null each
 *   discordant pair goes either way with probability 1/2, so p = min(1, 2·P(X ≤ min(b, c))) with
 *   X ~ Binomial(b + c, 1/2), and p = 1 when there are no discordant pairs.
 * - Quantiles: linear interpolation between order statistics (h = (n − 1)·q).
 * Cost: Wilson O(1) per rate; bootstrap O(resamples · n · measures); everything else O(n log n).
 */
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { uniformInt } from 'pure-rand/distribution/uniformInt';

/** Φ⁻¹(0.975), the standard normal quantile of a two-sided 95% interval (common practice, no source; 16 digits). */
export const Z_95 = 1.959963984540054;

export interface RateCI {
  /** successes / n; null when n = 0 */
  readonly rate: number | null;
  /** the 95% Wilson score interval; null when n = 0 */
  readonly ci_low: number | null;
  readonly ci_high: number | null;
  readonly n: number;
  readonly ci_method: 'wilson-score';
}

/** A difference of two rates on paired items (second − first) with its interval. */
export interface DifferenceCI {
  /** rate of the second condition − rate of the first, on the n pairs; null when n = 0 */
  readonly estimate: number | null;
  /** the 95% paired percentile-bootstrap interval; null when n = 0 or no pair is discordant */
  readonly ci_low: number | null;
  readonly ci_high: number | null;
  readonly n: number;
  /** pairs on which the two conditions disagree */
  readonly discordant: number;
  readonly ci_method: 'paired-percentile-bootstrap';
  readonly resamples: number;
  readonly seed: number;
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

/**
 * The 95% Wilson score interval of `successes` out of `n` (see the module comment), clamped to
 * [0, 1] and exact at the ends: the lower bound is 0 when successes = 0, the upper 1 when
 * successes = n. Null bounds for n = 0.
 */
export function wilsonInterval(successes: number, n: number, z = Z_95): { low: number; high: number } | null {
  if (!Number.isInteger(n) || n < 0 || !Number.isInteger(successes) || successes < 0 || successes > n) {
    throw new Error(`wilsonInterval: expected whole numbers 0 ≤ successes ≤ n, found ${successes} of ${n}`);
  }
  if (n === 0) return null;
  const p = successes / n;
  const z2 = z * z;
  const denom = 1 + z2 / n;
  const centre = (p + z2 / (2 * n)) / denom;
  const half = (z / denom) * Math.sqrt((p * (1 - p)) / n + z2 / (4 * n * n));
  return {
    low: successes === 0 ? 0 : Math.max(0, centre - half),
    high: successes === n ? 1 : Math.min(1, centre + half),
  };
}

/** The rate of `true` in `outcomes` with its 95% Wilson score interval. */
export function wilsonRate(outcomes: readonly boolean[]): RateCI {
  const n = outcomes.length;
  let k = 0;
  for (const o of outcomes) if (o) k++;
  const ci = wilsonInterval(k, n);
  return { rate: n === 0 ? null : k / n, ci_low: ci?.low ?? null, ci_high: ci?.high ?? null, n, ci_method: 'wilson-score' };
}

/**
 * Paired differences of several measures at once: `first[m][i]` and `second[m][i]` are measure m's
 * outcomes on item i under the two conditions (the same items for every measure). Every measure
 * uses the same resampled items, so the intervals of one call are computed on one set of
 * resamples. Returns one DifferenceCI per measure, in order.
 */
export function pairedBootstrapDifferences(
  first: readonly (readonly boolean[])[],
  second: readonly (readonly boolean[])[],
  resamples = BOOTSTRAP_RESAMPLES,
  seed = BOOTSTRAP_SEED,
): DifferenceCI[] {
  if (first.length !== second.length) throw new Error(`paired differences need the same measures, got ${first.length} and ${second.length}`);
  const measures = first.length;
  const n = measures === 0 ? 0 : first[0].length;
  // per measure and item: second − first ∈ {−1, 0, 1}
  const d: Int8Array[] = [];
  for (let m = 0; m < measures; m++) {
    if (first[m].length !== n || second[m].length !== n) throw new Error(`paired differences need ${n} pairs per measure, got ${first[m].length} and ${second[m].length}`);
    d.push(Int8Array.from({ length: n }, (_, i) => (second[m][i] ? 1 : 0) - (first[m][i] ? 1 : 0)));
  }
  const base = { ci_method: 'paired-percentile-bootstrap' as const, resamples, seed };
  if (n === 0) return d.map(() => ({ estimate: null, ci_low: null, ci_high: null, n: 0, discordant: 0, ...base }));
  const sums = new Float64Array(measures * resamples);
  const rng = xoroshiro128plus(seed);
  for (let r = 0; r < resamples; r++) {
    for (let i = 0; i < n; i++) {
      const j = uniformInt(rng, 0, n - 1);
      for (let m = 0; m < measures; m++) sums[m * resamples + r] += d[m][j];
    }
  }
  return d.map((dm, m) => {
    let total = 0;
    let discordant = 0;
    for (let i = 0; i < n; i++) {
      total += dm[i];
      if (dm[i] !== 0) discordant++;
    }
    if (discordant === 0) return { estimate: 0, ci_low: null, ci_high: null, n, discordant, ...base };
    const diffs = sums.subarray(m * resamples, (m + 1) * resamples).map((s) => s / n).sort();
    return { estimate: total / n, ci_low: quantileSorted(diffs, 0.025), ci_high: quantileSorted(diffs, 0.975), n, discordant, ...base };
  });
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
