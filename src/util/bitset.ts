/**
 * Bitsets over `Uint32Array`, the representation of token masks.
 *
 * Convention (shared with src/util/constraint.ts): bit `i & 31` of word `i >>> 5` is element `i`.
 * All helpers are allocation-free except `words`, `fromIndices` and `toArray`. Bits at positions
 * ≥ the logical size are the caller's business: `setAll` takes the size so it never sets them.
 */

/** Number of 32-bit words needed for `n` bits. */
export function wordsFor(n: number): number {
  return (n + 31) >>> 5;
}

/** A new, all-clear bitset able to hold `n` bits. */
export function words(n: number): Uint32Array {
  return new Uint32Array(wordsFor(n));
}

export function set(bits: Uint32Array, i: number): void {
  bits[i >>> 5] |= 1 << (i & 31);
}

export function clear(bits: Uint32Array, i: number): void {
  bits[i >>> 5] &= ~(1 << (i & 31));
}

export function has(bits: Uint32Array, i: number): boolean {
  return (bits[i >>> 5] & (1 << (i & 31))) !== 0;
}

/** Clears every bit. */
export function clearAll(bits: Uint32Array): void {
  bits.fill(0);
}

/** Sets bits 0 … n-1 and clears every bit from n on. */
export function setAll(bits: Uint32Array, n: number): void {
  const full = n >>> 5;
  bits.fill(0xffffffff, 0, full);
  if (full < bits.length) {
    bits[full] = (n & 31) === 0 ? 0 : (0xffffffff >>> (32 - (n & 31)));
    bits.fill(0, full + 1);
  }
}

/** Sets bits lo … hi-1 (a half-open range). */
export function setRange(bits: Uint32Array, lo: number, hi: number): void {
  if (lo >= hi) return;
  const wLo = lo >>> 5;
  const wHi = (hi - 1) >>> 5;
  const maskLo = 0xffffffff << (lo & 31);
  const maskHi = 0xffffffff >>> (31 - ((hi - 1) & 31));
  if (wLo === wHi) {
    bits[wLo] |= maskLo & maskHi;
    return;
  }
  bits[wLo] |= maskLo;
  for (let w = wLo + 1; w < wHi; w++) bits[w] = 0xffffffff;
  bits[wHi] |= maskHi;
}

/** `target |= source`, word by word over the shorter length. */
export function orInPlace(target: Uint32Array, source: Uint32Array): void {
  const n = Math.min(target.length, source.length);
  for (let w = 0; w < n; w++) target[w] |= source[w];
}

/** `target &= source`; words of `target` beyond `source` are cleared. */
export function andInPlace(target: Uint32Array, source: Uint32Array): void {
  const n = Math.min(target.length, source.length);
  for (let w = 0; w < n; w++) target[w] &= source[w];
  if (target.length > n) target.fill(0, n);
}

/** `target &= ~source` (remove every element of `source`). */
export function andNotInPlace(target: Uint32Array, source: Uint32Array): void {
  const n = Math.min(target.length, source.length);
  for (let w = 0; w < n; w++) target[w] &= ~source[w];
}

/** Number of set bits (SWAR popcount, common practice, no source). */
export function count(bits: Uint32Array): number {
  let total = 0;
  for (let w = 0; w < bits.length; w++) total += popcount32(bits[w]);
  return total;
}

export function popcount32(x: number): number {
  x = x - ((x >>> 1) & 0x55555555);
  x = (x & 0x33333333) + ((x >>> 2) & 0x33333333);
  x = (x + (x >>> 4)) & 0x0f0f0f0f;
  return Math.imul(x, 0x01010101) >>> 24;
}

/** True when no bit is set. */
export function isEmpty(bits: Uint32Array): boolean {
  for (let w = 0; w < bits.length; w++) if (bits[w] !== 0) return false;
  return true;
}

/**
 * Calls `fn(i)` for each set bit in increasing order. No allocation; `fn` must not change `bits`
 * words it has not yet reached.
 */
export function forEachSet(bits: Uint32Array, fn: (i: number) => void): void {
  for (let w = 0; w < bits.length; w++) {
    let word = bits[w];
    while (word !== 0) {
      const low = word & -word;
      fn((w << 5) + (31 - Math.clz32(low)));
      word ^= low;
    }
  }
}

/** The first set bit at position ≥ `from`, or -1. Lets hot loops iterate without a callback. */
export function nextSet(bits: Uint32Array, from: number): number {
  let w = from >>> 5;
  if (w >= bits.length) return -1;
  let word = bits[w] & (0xffffffff << (from & 31));
  for (;;) {
    if (word !== 0) return (w << 5) + (31 - Math.clz32(word & -word));
    if (++w >= bits.length) return -1;
    word = bits[w];
  }
}

/** The set bits as an array (allocates; not for hot loops). */
export function toArray(bits: Uint32Array): number[] {
  const out: number[] = [];
  forEachSet(bits, (i) => out.push(i));
  return out;
}

/** A bitset of size `n` holding `indices`. */
export function fromIndices(n: number, indices: Iterable<number>): Uint32Array {
  const bits = words(n);
  for (const i of indices) set(bits, i);
  return bits;
}
