/**
 * Program text the parser refuses or reads by definition rather than by accident:
 * - an unpaired UTF-16 surrogate is refused with a located error: the Unicode Standard (ch. 3,
 *   D76/D91: a Unicode scalar value excludes surrogates; UTF-8 cannot encode them) — so no
 *   tokenizer can emit it, and V8's TextEncoder replaces it with U+FFFD (checked below);
 * - token regexes have full-match semantics (a lexeme belongs to a class exactly when
 *   `new RegExp('^(?:' + REGEX + ')$')` accepts it, ECMA-262): with `/(?:[0-9]|[0-9]a)/` the text
 *   `1a` is one lexeme even though the first alternative matches a prefix — the parser and the
 *   masks agree with V8 here.
 */
import { describe, expect, it } from 'vitest';
import { compileDescription, loadGrammar } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { compileMasks } from '../../src/masks/index.ts';
import { createParser, ParseError } from '../../src/tree/index.ts';
import { smallVocabulary } from '../masks/helpers.ts';

function compile(text: string): Grammar {
  const { grammar, diagnostics } = compileDescription(text, 'g.twg');
  if (grammar === null) throw new Error(diagnostics.map((d) => d.message).join('\n'));
  return grammar;
}

describe('unpaired surrogates', () => {
  const json = loadGrammar('grammars/json/json.twg');
  const p = createParser(json);

  it('V8 cannot encode one as UTF-8 (it writes U+FFFD instead)', () => {
    expect([...new TextEncoder().encode('\uD800')]).toEqual([0xef, 0xbf, 0xbd]);
  });

  it('a lone high surrogate inside a string token is a located error', () => {
    const text = '{"crop": "pe\uD83Dar"}';
    expect(() => p.parse(text)).toThrow(ParseError);
    expect(() => p.parse(text)).toThrow('<input>:1:13: an unpaired surrogate U+D83D: program text must be valid Unicode');
  });

  it('a lone low surrogate, and a pair written in the wrong order, are refused where they stand', () => {
    expect(() => p.parse('["\uDE00"]')).toThrow('<input>:1:3: an unpaired surrogate U+DE00');
    expect(() => p.parse('[1, "\uDE00\uD83D"]')).toThrow('<input>:1:6: an unpaired surrogate U+DE00');
  });

  it('a surrogate pair (an astral character) is text like any other', () => {
    expect(p.parse('["pear \uD83C\uDF50"]')).toEqual(p.parse('["pear 🍐"]'));
  });
});

describe('token regexes match the whole lexeme (alternation order does not matter)', () => {
  const g = compile('grammar g\nstart A\nspace " "\ntoken T = /(?:[0-9]|[0-9]a)/ as text\nsort A { a(xs: T+) = xs sep ","; }\n');

  it('V8 full-match semantics accept 1a', () => {
    expect(new RegExp('^(?:(?:[0-9]|[0-9]a))$').test('1a')).toBe(true);
  });

  it('the parser reads 1a as one lexeme', () => {
    expect(createParser(g).parse('1a, 2, 3a')).toEqual({ kind: 'a', xs: ['1a', '2', '3a'] });
  });

  it('the masks allow exactly what the parser reads', () => {
    const pieces = ['0', '1', 'a', '1a', ',', ' ', 'b'].map((s) => new TextEncoder().encode(s));
    const v = smallVocabulary(pieces);
    const c = compileMasks(g, v).bind({});
    const s = c.advanceBytes(c.start(), new TextEncoder().encode('1a'));
    expect(c.viable(s)).toBe(true);
    const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
    c.writeAllowed(s, Infinity, mask);
    expect(v.eosIds.some((id) => (mask[id >>> 5]! & (1 << (id & 31))) !== 0)).toBe(true);
    expect(c.viable(c.advanceBytes(c.start(), new TextEncoder().encode('1aa')))).toBe(false);
    expect(() => createParser(g).parse('1aa')).toThrow(ParseError);
  });
});
