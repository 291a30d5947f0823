/**
 * Seeded random mutations of description texts, for the fuzz test: delete a span, duplicate a line,
 * swap two tokens, truncate, insert punctuation. Deterministic for a given seed.
 */

/** mulberry32: a small 32-bit PRNG (common practice, no source); returns floats in [0, 1). */
import { mulberry32 as rng } from '../../src/util/random.ts';
export { rng };

const PUNCTUATION = '{}[]()";:,=@~?*+/#\\|$-.\'`!<>';
const TOKEN = /"(?:\\.|[^"\\\n])*"|\/(?:\\.|[^/\n])+\/[a-z]*|[A-Za-z_][A-Za-z0-9_]*|[0-9]+|\S/g;

export type MutationKind = 'delete' | 'duplicate-line' | 'swap-tokens' | 'truncate' | 'insert-punctuation';
export const MUTATION_KINDS: readonly MutationKind[] = ['delete', 'duplicate-line', 'swap-tokens', 'truncate', 'insert-punctuation'];

export function mutate(text: string, kind: MutationKind, rand: () => number): string {
  const int = (n: number) => Math.floor(rand() * n);
  switch (kind) {
    case 'delete': {
      const start = int(text.length);
      const len = 1 + int(24);
      return text.slice(0, start) + text.slice(start + len);
    }
    case 'duplicate-line': {
      const lines = text.split('\n');
      const k = int(lines.length);
      lines.splice(k, 0, lines[k]!);
      return lines.join('\n');
    }
    case 'swap-tokens': {
      const toks = [...text.matchAll(TOKEN)].map((m) => ({ start: m.index!, end: m.index! + m[0].length, text: m[0] }));
      if (toks.length < 2) return text;
      let a = int(toks.length);
      let b = int(toks.length);
      if (a === b) b = (a + 1) % toks.length;
      if (a > b) [a, b] = [b, a];
      const ta = toks[a]!;
      const tb = toks[b]!;
      return text.slice(0, ta.start) + tb.text + text.slice(ta.end, tb.start) + ta.text + text.slice(tb.end);
    }
    case 'truncate':
      return text.slice(0, int(text.length));
    case 'insert-punctuation': {
      const at = int(text.length + 1);
      const ch = PUNCTUATION[int(PUNCTUATION.length)]!;
      return text.slice(0, at) + ch + text.slice(at);
    }
  }
}

/** One to three mutations of random kinds. */
export function randomMutant(text: string, rand: () => number): { text: string; kinds: MutationKind[] } {
  const n = 1 + Math.floor(rand() * 3);
  const kinds: MutationKind[] = [];
  let out = text;
  for (let i = 0; i < n; i++) {
    const k = MUTATION_KINDS[Math.floor(rand() * MUTATION_KINDS.length)]!;
    kinds.push(k);
    out = mutate(out, k, rand);
  }
  return { text: out, kinds };
}
