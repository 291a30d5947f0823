/**
 * Token-class DFAs against the ECMAScript RegExp engine of V8 (ECMA-262 §22.2: a regex matched
 * against the whole lexeme is `^(?:p)$`), on random strings from each pattern's alphabet.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { compileRegex, runDfa, RegexError } from '../../src/automaton/regex.ts';
import { GRAMMARS, grammar } from '../masks/helpers.ts';

const utf8 = new TextEncoder();
const accepts = (pattern: string, flags: string, s: string, exclude: string[] = []) => {
  const d = compileRegex(pattern, flags, exclude.map((w) => utf8.encode(w)));
  return d.accept[runDfa(d, d.start, utf8.encode(s))] === 1;
};

const shipped = GRAMMARS.flatMap((g) => grammar(g).tokens.map((t) => [t.name, t.pattern, t.flags] as const));
const extra: Array<readonly [string, string, string]> = [
  ['case-insensitive keyword-ish', 'sel(?:ect)?|from', 'i'],
  ['counted repetition', '[a-c]{2,4}x?', ''],
  ['escapes', '\\d+\\.\\w*\\s?', ''],
  ['dot and negated class', '.[^a-z]*', ''],
  ['unicode class', '[à-ÿ]+|€', 'u'],
  ['nested groups', '(?:a(?:b|c)*)+d', ''],
  ['quoted with escapes', "'(?:[^'\\\\]|\\\\.)*'", ''],
];

function alphabetOf(pattern: string): string[] {
  const chars = new Set<string>([...pattern.replace(/\\./g, '')]);
  for (const c of ['a', 'Z', '0', '9', '_', ' ', '"', "'", '\\', '.', '-', 'é', 'ÿ', '€', '😀', '\u0001', 'u', 'e', 'E', '+']) chars.add(c);
  return [...chars];
}

describe('token-class DFA equals the ECMAScript RegExp (V8) on whole lexemes', () => {
  for (const [name, pattern, flags] of [...shipped, ...extra]) {
    it(`${name}: /${pattern}/${flags}`, () => {
      const re = new RegExp(`^(?:${pattern})$`, flags);
      const d = compileRegex(pattern, flags);
      const alpha = alphabetOf(pattern);
      fc.assert(
        fc.property(fc.array(fc.constantFrom(...alpha), { maxLength: 12 }), (chars) => {
          const s = chars.join('');
          expect(d.accept[runDfa(d, d.start, utf8.encode(s))] === 1).toBe(re.test(s));
        }),
        { numRuns: 300, seed: 42 },
      );
    });
  }

  it('every live state can reach acceptance (trimmed), dead state is 0', () => {
    for (const [, pattern, flags] of shipped) {
      const d = compileRegex(pattern, flags);
      for (let s = 1; s < d.stateCount; s++) expect(d.minAccept[s]).toBeLessThan(1000);
      for (let b = 0; b < 256; b++) expect(d.trans[b]).toBe(0);
      expect(d.accept[0]).toBe(0);
    }
  });

  it('reserved classes lose exactly the keywords', () => {
    expect(accepts('[A-Za-z_][A-Za-z0-9_]*', '', 'SELECT', ['SELECT', 'FROM'])).toBe(false);
    expect(accepts('[A-Za-z_][A-Za-z0-9_]*', '', 'SELECTED', ['SELECT', 'FROM'])).toBe(true);
    expect(accepts('[A-Za-z_][A-Za-z0-9_]*', '', 'SELEC', ['SELECT', 'FROM'])).toBe(true);
    expect(accepts('[A-Za-z_][A-Za-z0-9_]*', '', 'select', ['SELECT', 'FROM'])).toBe(true);
  });

  it('shortest lexemes and distances', () => {
    const d = compileRegex('"(?:[^"\\\\]|\\\\u[0-9a-f]{4})*"', '');
    expect(Buffer.from(d.shortest!).toString()).toBe('""');
    const afterU = runDfa(d, d.start, utf8.encode('"\\u'));
    expect(d.minAccept[afterU]).toBe(5); // four hex digits and the closing quote
  });

  it('refuses what a DFA cannot express, with a plain message', () => {
    expect(() => compileRegex('a(?=b)', '')).toThrow(new RegexError('a lookahead group is not supported in token patterns (the automaton reads each character once and cannot look around)'));
    expect(() => compileRegex('(a)\\1', '')).toThrow(RegexError);
    expect(() => compileRegex('\\bx', '')).toThrow('the assertion \\b is not supported in token patterns (a word boundary depends on the characters around the lexeme)');
  });
});
