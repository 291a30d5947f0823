/**
 * Numeric token classes of the shipped grammars: every lexeme of the class regex (the language the
 * token masks follow) has a value that is exact and prints back as a lexeme of the same class, so
 * any constrained output parses into a tree that validateTree accepts.
 *
 * References: ECMAScript `Number(string)` (StringToNumber) reads the lexeme and
 * `JSON.stringify` / Number::toString prints the value (ECMA-262, Node 20); fast-check's
 * `stringMatching` draws strings from the JavaScript regex itself, independent of our regex code.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import type { Grammar, TokenClass } from '../../src/description/ir.ts';
import { createParser, validateTree } from '../../src/tree/index.ts';

const RUNS = 2000;

/** A whole program around one lexeme of the class, and the path of the lexeme's value in its tree. */
const PROGRAMS: Record<string, Record<string, (lexeme: string) => string>> = {
  arith: { Num: (x) => x },
  lf: { Num: (x) => `value: ${x}` },
  sql: { Int: (x) => `SELECT * FROM t LIMIT ${x}`, Dec: (x) => `SELECT * FROM t WHERE a = ${x}` },
};

/** Hand-picked corner cases per class: digit-count limits, zeros, the smallest fraction. */
const CORNERS: Record<string, string[]> = {
  Num: ['0', '00', '000000000', '999999999', '0.0', '0.000000', '0.000001', '000000000.000001', '999999999.999999', '123456789.123456', '1.500000', '9.1'],
  Int: ['0', '000000000', '999999999', '000000007', '100000000'],
  Dec: ['0.1', '0.000001', '000000000.000001', '999999999.999999', '123456789.123456', '1.000009', '7.05', '00.5'],
};

function classes(g: Grammar): TokenClass[] {
  return g.tokens.filter((t) => t.value === 'int' || t.value === 'number');
}

/** The number a lexeme reads as (ECMAScript StringToNumber), and how that number prints. */
function readBack(lexeme: string): { value: number; printed: string } {
  const value = Number(lexeme);
  return { value, printed: JSON.stringify(value) };
}

describe.each(['arith', 'lf', 'sql'])('%s: numeric classes are exact and print back', (name) => {
  const g = loadGrammar(`grammars/${name}/${name}.twg`);
  const parser = createParser(g);
  const names = name === 'sql' ? { Table: ['t'], Column: ['a'] } : undefined;

  it('the numeric classes are the expected ones', () => {
    expect(classes(g).map((t) => t.name).sort()).toEqual(Object.keys(PROGRAMS[name]!).sort());
  });

  for (const tok of classes(g)) {
    const whole = new RegExp(`^(?:${tok.pattern})$`, tok.flags);
    const check = (lexeme: string) => {
      expect(whole.test(lexeme), lexeme).toBe(true);
      const { value, printed } = readBack(lexeme);
      // reference: ECMAScript Number / JSON.stringify — the value is finite (safe for `as int`)
      expect(tok.value === 'int' ? Number.isSafeInteger(value) : Number.isFinite(value), lexeme).toBe(true);
      // the printed value is again a lexeme of the class and reads as the same number
      expect(whole.test(printed), `${lexeme} prints as ${printed}`).toBe(true);
      expect(Number(printed), lexeme).toBe(value);
      // the value is exact: the lexeme without leading/trailing zeros is the printed text
      const digits = lexeme.includes('.') ? lexeme.replace(/^0+(?=[0-9])/, '').replace(/\.?0+$/, '') : lexeme.replace(/^0+(?=[0-9])/, '');
      expect(printed, lexeme).toBe(digits === '' ? '0' : digits);
      // our parser reads the program into a tree validateTree accepts, holding that value
      const tree = parser.parse(PROGRAMS[name]![tok.name]!(lexeme), { names });
      expect(validateTree(g, tree, { names }), lexeme).toBeNull();
      expect(JSON.stringify(tree)).toContain(`:${printed}}`); // the value is the last field of its node
    };

    it(`${tok.name}: corner cases`, () => {
      for (const lexeme of CORNERS[tok.name]!.filter((x) => whole.test(x))) check(lexeme);
    });

    it(`${tok.name}: ${RUNS} lexemes drawn from the regex`, () => {
      fc.assert(
        fc.property(fc.stringMatching(whole), (lexeme) => {
          check(lexeme);
        }),
        { numRuns: RUNS, seed: 20261202 },
      );
    });
  }
});

describe('sql: Dec never spells an integer value', () => {
  // 1.0 reads as 1, which prints as `1`: an Int lexeme, not a Dec one
  const dec = loadGrammar('grammars/sql/sql.twg').tokens.find((t) => t.name === 'Dec')!;
  const whole = new RegExp(`^(?:${dec.pattern})$`, dec.flags);
  it.each(['1.0', '0.0', '2.50', '0.0000001', '1234567890.5', '1.1234567'])('%s is not a Dec lexeme', (x) => {
    expect(whole.test(x)).toBe(false);
  });
});
