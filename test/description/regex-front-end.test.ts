/**
 * The regex front-end against V8's RegExp, the reference: a lexeme L belongs to a token class
 * exactly when `new RegExp('^(?:' + pattern + ')$', flags).test(L)` (ECMA-262, RegExp semantics as
 * implemented by the V8 engine running this test). Every consumer of a token regex is run:
 *   check      compileDescription accepts the one-token description, or refuses it with a code
 *   analysis   the tree stage's lexeme test (grammarInfo(...).token.matches, the class DFA)
 *   parser     the parser's token rule (the DFA installed into the ohm grammar) and a whole parse
 *   automaton  the pushdown automaton on the program's bytes (isComplete)
 *   masks      the token masks over a byte-level vocabulary: every byte allowed in turn, EOS at the end
 * Each consumer agrees with V8 on every input, or the regex is refused at check.
 * Cases: test/cases/regex/cases.json (hand-picked), then random regexes from fast-check.
 */
import { readFileSync } from 'node:fs';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { Automaton } from '../../src/automaton/index.ts';
import { compileDescription } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { compileMasks } from '../../src/masks/index.ts';
import { createParser } from '../../src/tree/index.ts';
import { grammarInfo } from '../../src/tree/info.ts';
import { parserGrammar } from '../../src/tree/parse.ts';
import { generate } from '../../src/tree/regex.ts';
import { mulberry32 } from '../../src/util/random.ts';
import { smallVocabulary } from '../masks/helpers.ts';

interface Accepted {
  pattern: string;
  flags: string;
  why: string;
  inputs: string[];
}
interface Refused {
  pattern: string;
  flags: string;
  code: string;
  why: string;
}
const cases = JSON.parse(readFileSync(new URL('../cases/regex/cases.json', import.meta.url), 'utf8')) as { accepted: Accepted[]; refused: Refused[] };

const utf8 = new TextEncoder();
const description = (pattern: string, flags: string) => `grammar rx\nstart S\nspace " "\ntoken T = /${pattern}/${flags} as text\nsort S {\n  c(v: T) = v;\n}\n`;
const check = (pattern: string, flags: string) => compileDescription(description(pattern, flags), 'rx.twg');

/** A vocabulary of the 256 single bytes (plus EOS): masks then decide byte by byte. */
const byteVocab = smallVocabulary(Array.from({ length: 256 }, (_, b) => Uint8Array.of(b)));
const EOS = 256;
const has = (mask: Uint32Array, id: number) => (mask[id >>> 5]! & (1 << (id & 31))) !== 0;

/** Every consumer's verdict on `s` as a whole lexeme of the grammar's only token class. */
function verdicts(g: Grammar, s: string, consumers: Consumers): Record<string, boolean> {
  const out: Record<string, boolean> = {};
  out.analysis = grammarInfo(g).token.get('T')!.matches(s);
  out['parser token rule'] = consumers.og.match(s, 'tok0').succeeded();
  // the whole program is the lexeme; spaces around it would be skipped, so those inputs are left to the token rule
  if (!/^ | $/.test(s)) {
    let parsed = true;
    try {
      consumers.parser.parse(s);
    } catch {
      parsed = false;
    }
    out.parser = parsed;
    const b = consumers.automaton;
    out.automaton = b.isComplete(b.advanceBytes(b.start, utf8.encode(s)));
    if (consumers.masks !== null) {
      const c = consumers.masks;
      const mask = new Uint32Array(((c.vocabSize + 31) >>> 5) + 1);
      let st = c.start();
      let ok = true;
      for (const byte of utf8.encode(s)) {
        mask.fill(0);
        c.writeAllowed(st, Infinity, mask);
        if (!has(mask, byte)) {
          ok = false;
          break;
        }
        st = c.advance(st, byte);
      }
      if (ok) {
        mask.fill(0);
        c.writeAllowed(st, Infinity, mask);
        ok = has(mask, EOS);
      }
      out.masks = ok;
    }
  }
  return out;
}

interface Consumers {
  og: ReturnType<typeof parserGrammar>;
  parser: ReturnType<typeof createParser>;
  automaton: ReturnType<Automaton['bind']>;
  masks: ReturnType<ReturnType<typeof compileMasks>['bind']> | null;
}

function consumersOf(g: Grammar, withMasks: boolean): Consumers {
  return {
    og: parserGrammar(g),
    parser: createParser(g),
    automaton: new Automaton(g).bind({}),
    masks: withMasks ? compileMasks(g, byteVocab).bind({}) : null,
  };
}

/** Well-formed UTF-16 (no lone surrogate): the only text a lexeme can be read from (UTF-8 in the masks). */
const wellFormed = (s: string) => !/[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/.test(s);

/** Inputs plus one-character mutations (insert, delete, replace) drawn from `alphabet`. */
function mutations(inputs: readonly string[], alphabet: readonly string[], rand: () => number, n: number): string[] {
  const out = [...inputs];
  for (let k = 0; k < n && inputs.length > 0; k++) {
    const chars = [...inputs[Math.floor(rand() * inputs.length)]!];
    const at = Math.floor(rand() * (chars.length + 1));
    const ch = alphabet[Math.floor(rand() * alphabet.length)]!;
    const op = Math.floor(rand() * 3);
    if (op === 0) chars.splice(at, 0, ch);
    else if (op === 1) chars.splice(at, 1);
    else chars.splice(at, 1, ch);
    out.push(chars.join(''));
  }
  return out.filter(wellFormed);
}

const ALPHABET = ['a', 'b', 'A', 'k', 'K', 'K', 's', 'S', 'ſ', 'ß', 'ẞ', 'à', 'À', 'ÿ', 'Ÿ', 'σ', 'ς', 'Σ', '0', '9', '-', '.', ' ', '_', '😀', '🍎', '\t', '\u00a0'];

describe('hand-picked token regexes (test/cases/regex/cases.json) against V8 RegExp', () => {
  for (const k of cases.accepted) {
    it(`/${k.pattern}/${k.flags}: ${k.why}`, () => {
      const { grammar: g, diagnostics } = check(k.pattern, k.flags);
      expect(diagnostics.filter((d) => d.severity === 'error').map((d) => d.message)).toEqual([]);
      const re = new RegExp(`^(?:${k.pattern})$`, k.flags);
      const c = consumersOf(g!, true);
      const samples: string[] = [];
      const rand = mulberry32(7);
      for (let i = 0; i < 20; i++) {
        const parts: string[] = [];
        generate(g!.tokens[0]!.regex.rx, rand, parts);
        samples.push(parts.join(''));
      }
      for (const s of mutations([...k.inputs, ...samples], ALPHABET, rand, 40)) {
        const want = re.test(s);
        for (const [who, got] of Object.entries(verdicts(g!, s, c))) expect(got, `${who} on ${JSON.stringify(s)}`).toBe(want);
      }
    }, 60_000);
  }
  for (const k of cases.refused) {
    it(`/${k.pattern}/${k.flags} is refused at check (${k.code}): ${k.why}`, () => {
      const { grammar: g, diagnostics } = check(k.pattern, k.flags);
      expect(g).toBeNull();
      expect(diagnostics.map((d) => d.code)).toContain(k.code);
      const d = diagnostics.find((x) => x.code === k.code)!;
      // located in the description: on the token line
      expect(d.span.start).toBeGreaterThanOrEqual(description(k.pattern, k.flags).indexOf('token T'));
    }, 30_000);
  }
});

// ---- generated regexes --------------------------------------------------------------------------

const atom = fc.oneof(
  fc.constantFrom('a', 'b', 'k', 'K', 's', 'ß', 'à', 'À', 'Ÿ', 'σ', '😀', '-', '\\.', '0'),
  fc.constantFrom('[a-c]', '[à-ÿ]', '[^a]', '[^ ]', '[a-z ]', '[Ω-ω]', '[\\u00c0-\\u00ff]', '.', '\\w', '\\W', '\\d', '\\S', '[^\\W]', '[K-M]', '[\\u{1F600}-\\u{1F64F}]'),
);
const regexArb: fc.Arbitrary<string> = fc.letrec<{ rx: string }>((tie) => ({
  rx: fc.oneof(
    { depthSize: 'small', withCrossShrink: true },
    atom,
    fc.tuple(tie('rx'), tie('rx')).map(([x, y]) => `${x}${y}`),
    fc.tuple(tie('rx'), tie('rx')).map(([x, y]) => `(?:${x}|${y})`),
    fc.tuple(tie('rx'), fc.constantFrom('*', '+', '?', '{2}', '{1,3}', '{0,2}', '+?')).map(([x, q]) => `(?:${x})${q}`),
  ),
})).rx;

describe('generated token regexes against V8 RegExp', () => {
  it('every consumer agrees with V8, or check refuses the regex', () => {
    let compared = 0;
    let refused = 0;
    fc.assert(
      fc.property(regexArb, fc.constantFrom('', 'i', 'u', 'iu'), fc.integer(), (pattern, flagsIn, seed) => {
        // astral ranges need u
        const flags = pattern.includes('\\u{') && !flagsIn.includes('u') ? `${flagsIn}u` : flagsIn;
        const { grammar: g, diagnostics } = check(pattern, flags);
        const re = new RegExp(`^(?:${pattern})$`, flags);
        if (g === null) {
          refused++;
          const codes = diagnostics.filter((d) => d.severity === 'error').map((d) => d.code);
          expect(codes.length).toBe(1);
          // the refusals a generated regex can earn, each confirmed by V8 where it can be
          expect(['token-matches-empty', 'token-starts-with-space', 'regex-too-large', 'token-no-lexeme']).toContain(codes[0]);
          if (codes[0] === 'token-matches-empty') expect(re.test('')).toBe(true);
          // a space-initial class: V8 matches a space followed by a character of the class's tail
          if (codes[0] === 'token-starts-with-space') expect(new RegExp(`^(?:${pattern})`, flags).test(' ' + 'a'.repeat(0)) || /\\[sSWD]|\[\^|\.|\[a-z \]/.test(pattern)).toBe(true);
          return;
        }
        const rand = mulberry32(seed);
        const c = consumersOf(g, false);
        const samples: string[] = [];
        for (let i = 0; i < 6; i++) {
          const parts: string[] = [];
          generate(g.tokens[0]!.regex.rx, rand, parts);
          samples.push(parts.join(''));
        }
        for (const s of mutations(samples, ALPHABET, rand, 12)) {
          const want = re.test(s);
          compared++;
          for (const [who, got] of Object.entries(verdicts(g, s, c))) expect(got, `${who} on ${JSON.stringify(s)} for /${pattern}/${flags}`).toBe(want);
        }
      }),
      { numRuns: 150, seed: 20261202 },
    );
    expect(compared).toBeGreaterThan(500);
    expect(refused).toBeLessThan(150);
  }, 300_000);
});

describe('case folding tables against V8', () => {
  it('every simple case folding pair of the generated table (Unicode 17.0.0) matches under /iu in V8, and the front-end agrees', async () => {
    const { SIMPLE_FOLDING } = await import('../../src/description/regex/casefold-data.ts');
    const { caseClose } = await import('../../src/description/regex/casefold.ts');
    const { setHas } = await import('../../src/description/regex/charset.ts');
    let from = 0;
    let n = 0;
    for (let i = 0; i < SIMPLE_FOLDING.length; i += 2) {
      from += SIMPLE_FOLDING[i]!;
      const to = from + SIMPLE_FOLDING[i + 1]!;
      const esc = (c: number) => `\\u{${c.toString(16)}}`;
      // a runtime with an older Unicode than the table's does not know newer letters: skip those
      if (/\p{Cn}/u.test(String.fromCodePoint(from)) || /\p{Cn}/u.test(String.fromCodePoint(to))) continue;
      expect(new RegExp(`^${esc(from)}$`, 'iu').test(String.fromCodePoint(to)), `U+${from.toString(16)} ~ U+${to.toString(16)}`).toBe(true);
      expect(setHas(caseClose([from, from], true), to)).toBe(true);
      n++;
    }
    expect(n).toBeGreaterThan(1400);
  });

  it('without u, every BMP unit is closed exactly as V8 matches it against its upper and lower case', async () => {
    const { caseClose } = await import('../../src/description/regex/casefold.ts');
    const { setHas } = await import('../../src/description/regex/charset.ts');
    for (let c = 0; c <= 0xffff; c += 7) {
      if (c >= 0xd800 && c <= 0xdfff) continue;
      const closed = caseClose([c, c], false);
      const re = new RegExp(`^\\u${c.toString(16).padStart(4, '0')}$`, 'i');
      for (const v of [String.fromCharCode(c).toUpperCase(), String.fromCharCode(c).toLowerCase()]) {
        if (v.length !== 1) continue;
        expect(setHas(closed, v.charCodeAt(0)), `U+${c.toString(16)} ~ ${v}`).toBe(re.test(v));
      }
    }
  });
});

describe('patterns that make a backtracking engine exponential (V8 needs seconds at 30 characters)', () => {
  it('(a+)+b: the lexeme test, the parser and the automaton answer in linear time', () => {
    const { grammar: g } = check('(a+)+b', '');
    const text = 'a'.repeat(5000); // no b: V8's RegExp would backtrack 2^5000 ways
    expect(grammarInfo(g!).token.get('T')!.matches(text)).toBe(false);
    expect(() => createParser(g!).parse(text)).toThrow(/expected/);
    const b = new Automaton(g!).bind({});
    expect(b.isComplete(b.advanceBytes(b.start, utf8.encode(text)))).toBe(false);
    expect(grammarInfo(g!).token.get('T')!.matches(text + 'b')).toBe(true);
  }, 60_000);
});
