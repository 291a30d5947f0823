/**
 * Code-point ranges → UTF-8 byte-range sequences (RFC 3629, table 3-7 of the Unicode Standard:
 * well-formed UTF-8 byte sequences). A range [lo, hi] is split until every piece is a cross
 * product of byte ranges: e.g. [U+0080, U+07FF] → [C2-DF][80-BF]. Surrogates are dropped: they
 * never occur in well-formed text.
 */

export type ByteRangeSeq = Array<[number, number]>;

/** Appends to `out` the byte-range sequences whose union encodes exactly [lo, hi]. */
export function utf8Sequences(lo: number, hi: number, out: ByteRangeSeq[]): void {
  if (lo > hi) return;
  if (lo <= 0xdfff && hi >= 0xd800) {
    utf8Sequences(lo, 0xd7ff, out);
    utf8Sequences(0xe000, hi, out);
    return;
  }
  for (const max of [0x7f, 0x7ff, 0xffff]) {
    if (lo <= max && hi > max) {
      utf8Sequences(lo, max, out);
      utf8Sequences(max + 1, hi, out);
      return;
    }
  }
  if (hi <= 0x7f) {
    out.push([[lo, hi]]);
    return;
  }
  const n = hi <= 0x7ff ? 2 : hi <= 0xffff ? 3 : 4;
  for (let i = 1; i < n; i++) {
    const m = (1 << (6 * i)) - 1;
    if ((lo & ~m) !== (hi & ~m)) {
      if ((lo & m) !== 0) {
        utf8Sequences(lo, lo | m, out);
        utf8Sequences((lo | m) + 1, hi, out);
        return;
      }
      if ((hi & m) !== m) {
        utf8Sequences(lo, (hi & ~m) - 1, out);
        utf8Sequences(hi & ~m, hi, out);
        return;
      }
    }
  }
  const a = encodeCodePoint(lo);
  const b = encodeCodePoint(hi);
  const seq: ByteRangeSeq = [];
  for (let i = 0; i < a.length; i++) seq.push([a[i]!, b[i]!]);
  out.push(seq);
}

/** The UTF-8 bytes of one code point (RFC 3629). */
export function encodeCodePoint(c: number): number[] {
  if (c < 0x80) return [c];
  if (c < 0x800) return [0xc0 | (c >> 6), 0x80 | (c & 0x3f)];
  if (c < 0x10000) return [0xe0 | (c >> 12), 0x80 | ((c >> 6) & 0x3f), 0x80 | (c & 0x3f)];
  return [0xf0 | (c >> 18), 0x80 | ((c >> 12) & 0x3f), 0x80 | ((c >> 6) & 0x3f), 0x80 | (c & 0x3f)];
}
