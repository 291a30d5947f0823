/**
 * Token regexes in the parser: its token rules (the class DFAs, installed into the ohm grammar)
 * must accept exactly the strings the JavaScript RegExp engine accepts as a whole lexeme (the
 * reference: V8's ECMAScript regex implementation). Strings are generated from each pattern by the
 * sampler and then mutated (a character inserted, deleted or replaced), so both verdicts occur.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { compileDescription } from '../../src/description/index.ts';
import { createParser, mulberry32 } from '../../src/tree/index.ts';
import { generate } from '../../src/tree/regex.ts';
import { parserGrammar } from '../../src/tree/parse.ts';
import { parseTokenRegex } from '../../src/description/regex/index.ts';

const PATTERNS: { pattern: string; flags: string }[] = [
  { pattern: '[0-9]+(?:\\.[0-9]+)?', flags: '' },
  { pattern: '-?(?:0|[1-9][0-9]*)(?:\\.[0-9]+)?(?:[eE][+-]?[0-9]+)?', flags: '' },
  { pattern: '"(?:[^"\\\\\\u0000-\\u001F]|\\\\["\\\\\\/bfnrt]|\\\\u[0-9A-Fa-f]{4})*"', flags: '' },
  { pattern: "'(?:[^']|'')*'", flags: '' },
  { pattern: '[a-z][a-z0-9_]*', flags: 'i' },
  { pattern: '\\$[a-z][0-9]{0,2}', flags: '' },
  { pattern: '#[0-9a-f]{3}(?:[0-9a-f]{3})?', flags: 'i' },
  { pattern: '\\d{2,4}x\\w*', flags: '' },
  { pattern: '(?:ab|cd)+e?', flags: '' },
  { pattern: '@[^\\s@]+', flags: '' },
  { pattern: '`.`', flags: '' },
  { pattern: '[\\u{1F34E}-\\u{1F350}]x', flags: 'u' },
];

/** A description with one constructor per pattern, so the parser generates one token rule each. */
function description(): string {
  const lines = ['grammar rx', 'start S', 'space " "'];
  PATTERNS.forEach((p, i) => lines.push(`token T${i} = /${p.pattern}/${p.flags} as text`));
  lines.push('sort S {');
  PATTERNS.forEach((_, i) => lines.push(`  c${i}(v: T${i}) = "k${i}" v;`));
  lines.push('}');
  return lines.join('\n') + '\n';
}

describe('the parser\'s token rules agree with RegExp', () => {
  const { grammar, diagnostics } = compileDescription(description(), 'rx.twg');
  it('compiles', () => expect(diagnostics.filter((d) => d.severity === 'error')).toEqual([]));
  const og = parserGrammar(grammar!);

  it.each(PATTERNS.map((p, i) => ({ ...p, i })))('/$pattern/$flags', ({ pattern, flags, i }) => {
    const js = new RegExp(`^(?:${pattern})$`, flags);
    const rx = grammar!.tokens.find((t) => t.name === `T${i}`)!.regex.rx;
    const rule = `tok${grammar!.tokens.findIndex((t) => t.name === `T${i}`)}`;
    let accepted = 0;
    let rejected = 0;
    fc.assert(
      fc.property(fc.integer(), fc.integer({ min: 0, max: 3 }), fc.integer({ min: 0, max: 40 }), fc.constantFrom('a', '0', '"', "'", '\\', ' ', 'é', '.', 'Z', '_'), (seed, op, at, ch) => {
        const parts: string[] = [];
        generate(rx, mulberry32(seed), parts);
        let s = parts.join('');
        const k = Math.min(at, s.length);
        if (op === 1) s = s.slice(0, k) + ch + s.slice(k);
        if (op === 2) s = s.slice(0, k) + s.slice(k + 1);
        if (op === 3) s = s.slice(0, k) + ch + s.slice(k + 1);
        const want = js.test(s);
        if (want) accepted++;
        else rejected++;
        expect(og.match(s, rule).succeeded(), JSON.stringify(s)).toBe(want);
      }),
      { numRuns: 300, seed: 4242 + i },
    );
    expect(accepted).toBeGreaterThan(0);
    expect(rejected).toBeGreaterThan(0);
  });
});

describe('unsupported regex features', () => {
  it.each([
    ['a^', 'the anchor ^ here', 1],
    ['a\\b', 'the assertion \\b', 1],
    ['(a)\\1', 'a back-reference', 3],
    ['a(?<=a)', 'a lookbehind group', 1],
    ['(?!x)y', 'a negative lookahead group', 0],
    ['x\\p{L}', 'the property escape L', 1],
  ])('%s', (pattern, what, offset) => {
    const r = parseTokenRegex(pattern, 'u');
    expect('code' in r && r.code).toBe('regex-unsupported');
    if (!('code' in r)) return;
    expect(r.message.startsWith(`${what} is not supported in token patterns (`)).toBe(true);
    expect(r.offset).toBe(offset);
  });
});
