/**
 * Random lexemes for the sampler: a random match of a token class's regex IR (parsed once by the
 * description stage's regex front-end, src/description/regex/). Character sets there are already
 * case-closed, so a generated lexeme may use any case variant the flags allow.
 */
import { setHas, setIntersect, setSize, makeSet, type CharSet, type Rx } from '../description/regex/index.ts';

export { isWordCode, firstChars, lastChars, setHas, WORD, type CharSet, type Rx } from '../description/regex/index.ts';

// ---- generation -------------------------------------------------------------------------------

/** A few non-ASCII characters the generator mixes in, so escapes and code points get exercised. */
const EXOTIC = [0xe9, 0xfc, 0x3a9, 0x4e2d, 0x20ac, 0x1f34e];

/**
 * Appends a random match of `rx` to `out`. `rand()` returns a float in [0, 1). Repetitions take at
 * most `min + 3` rounds, so lexemes stay short.
 */
export function generate(rx: Rx, rand: () => number, out: string[]): void {
  switch (rx.t) {
    case 'set':
      out.push(String.fromCodePoint(pickChar(rx.set, rand)));
      return;
    case 'seq':
      for (const item of rx.items) generate(item, rand, out);
      return;
    case 'alt':
      generate(rx.items[Math.floor(rand() * rx.items.length)], rand, out);
      return;
    case 'rep': {
      const room = Math.min(rx.max - rx.min, 3);
      let n = rx.min;
      while (n - rx.min < room && rand() < 0.55) n++;
      for (let i = 0; i < n; i++) generate(rx.body, rand, out);
      return;
    }
  }
}

const PRINTABLE: CharSet = makeSet([[0x20, 0x7e]]);
/** Characters drawn when a set has no printable ASCII, or now and then: no C0 controls, no lone surrogates. */
const SAFE: CharSet = makeSet([
  [0x20, 0xd7ff],
  [0xe000, 0x10ffff],
]);

/** Per-set draws computed once (sets are immutable and shared by the Rx IR). */
const pools = new WeakMap<CharSet, { exotic: number[]; printable: CharSet; safe: CharSet }>();

function pickChar(set: CharSet, rand: () => number): number {
  let pool = pools.get(set);
  if (pool === undefined) {
    pool = {
      exotic: EXOTIC.filter((c) => setHas(set, c)),
      printable: setIntersect(set, PRINTABLE, 0x10ffff),
      safe: setIntersect(set, SAFE, 0x10ffff),
    };
    pools.set(set, pool);
  }
  const r = rand();
  if (r < 0.06) {
    const exotic = pool.exotic;
    if (exotic.length > 0) return exotic[Math.floor(rand() * exotic.length)];
  }
  const { printable, safe } = pool;
  const from = r < 0.97 && printable.length > 0 ? printable : safe.length > 0 ? safe : set;
  let k = Math.floor(rand() * setSize(from));
  for (let i = 0; i < from.length; i += 2) {
    const n = from[i + 1] - from[i] + 1;
    if (k < n) return from[i] + k;
    k -= n;
  }
  return from[0];
}
