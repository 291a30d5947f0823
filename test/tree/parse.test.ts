/**
 * Parser: exact trees for code, exact whole error messages (location, expected items in grammar
 * terms, excerpt), the word-boundary and longest-keyword rules (README, `space`), and whitespace.
 */
import { describe, expect, it } from 'vitest';
import { compileDescription, formatDiagnostics, loadGrammar } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { createParser, ParseError, printTree, type Tree } from '../../src/tree/index.ts';

// Unbounded numeric classes (the shipped grammars bound their digits): values out of range.
const WIDE = `grammar wide
start Value
space " "
token Int = /[0-9]+/ as int
token Num = /-?[0-9]+(?:\\.[0-9]+)?(?:[eE][+-]?[0-9]+)?/ as number
sort Value {
  int(value: Int) = "int" value;
  num(value: Num) = "num" value;
  list(items: Value*) = "[" ~items sep ~"," ~"]";
}
`;

const grammars: Record<string, Grammar> = {};
const grammar = (name: string) =>
  (grammars[name] ??= name === 'wide' ? compileDescription(WIDE, 'wide.twg').grammar! : loadGrammar(`grammars/${name}/${name}.twg`));
const parse = (g: string, text: string, names?: Record<string, string[]>): Tree => createParser(grammar(g)).parse(text, { file: `in.${g}`, names });

function expectParseError(g: string, text: string, message: string, names?: Record<string, string[]>): void {
  let got: unknown = null;
  try {
    parse(g, text, names);
  } catch (e) {
    got = e;
  }
  expect(got).toBeInstanceOf(ParseError);
  expect((got as Error).message).toBe(message);
}

/** Parses and prints: the canonical form of `text`. */
const canonical = (g: string, text: string) => printTree(grammar(g), parse(g, text));

describe('parse trees', () => {
  it('precedence and associativity (arith)', () => {
    expect(canonical('arith', '1+2*3')).toBe('1 + 2 * 3');
    expect(parse('arith', '2^3^4')).toEqual({ kind: 'pow', base: { kind: 'num', value: 2 }, exponent: { kind: 'pow', base: { kind: 'num', value: 3 }, exponent: { kind: 'num', value: 4 } } });
    expect(parse('arith', '-2^2')).toEqual({ kind: 'neg', operand: { kind: 'pow', base: { kind: 'num', value: 2 }, exponent: { kind: 'num', value: 2 } } });
    expect(parse('arith', '1-2-3')).toEqual({ kind: 'sub', left: { kind: 'sub', left: { kind: 'num', value: 1 }, right: { kind: 'num', value: 2 } }, right: { kind: 'num', value: 3 } });
    expect(canonical('arith', '((1))')).toBe('1');
    expect(canonical('arith', '(1 - (2 - 3))')).toBe('1 - (2 - 3)');
    expect(canonical('arith', '((2 ^ 3)) ^ 4')).toBe('(2 ^ 3) ^ 4');
    expect(canonical('arith', 'max( 1 ,2 )')).toBe('max(1, 2)');
  });
  it('numbers become their values and print canonically', () => {
    expect(parse('arith', '007.50')).toEqual({ kind: 'num', value: 7.5 });
    expect(canonical('arith', '007.50')).toBe('7.5');
    expect(canonical('wide', '[num 1E2, num -0.0e0, num 1.50, int 007]')).toBe('[num 100, num 0, num 1.5, int 7]');
    // JSON numbers are `as text`: the tree holds the lexeme, of any size
    expect(parse('json', '[1E2, -0.0e0, 1e999]')).toEqual({ kind: 'array', items: ['1E2', '-0.0e0', '1e999'].map((value) => ({ kind: 'number', value })) });
  });
  it('strings decode (JSON escapes; SQL doubled quotes)', () => {
    expect(parse('json', '"a\\u0041\\n\\/"')).toEqual({ kind: 'string', value: 'aA\n/' });
    expect(canonical('json', '"\\/\\u00e9"')).toBe('"/é"');
    const t = parse('sql', "SELECT * FROM t WHERE a LIKE 'it''s'");
    expect((t.where as Tree).pattern).toBe("it's");
  });
  it('longest keyword: <> and <= are one token, < > is not', () => {
    expect(canonical('sql', 'SELECT * FROM t WHERE a<>1')).toBe('SELECT * FROM t WHERE a <> 1');
    expect(canonical('sql', 'SELECT * FROM t WHERE a<=1')).toBe('SELECT * FROM t WHERE a <= 1');
    expect(canonical('lf', 'holds: 1<=2')).toBe('holds: 1 <= 2');
    expect(canonical('lf', 'value: 1-2')).toBe('value: 1 - 2');
  });
  it('one-token look-ahead: a class test or a measure in a comparison (lf)', () => {
    expect(parse('lf', 'holds: h(a)')).toEqual({ kind: 'truth', claim: { kind: 'is', class: 'h', arg: { kind: 'const', name: 'a' } } });
    expect(parse('lf', 'holds: h(a) > 3')).toEqual({ kind: 'truth', claim: { kind: 'compare', left: { kind: 'measure', fn: 'h', arg: { kind: 'const', name: 'a' } }, op: { kind: 'gt' }, right: { kind: 'literal', value: 3 } } });
    expect(canonical('lf', 'holds: (h(a) + 1) > 3 & (p(a))')).toBe('holds: h(a) + 1 > 3 & p(a)');
  });
  it('tokens that end in a non-word character may touch a keyword', () => {
    expect(canonical('sql', "SELECT * FROM t WHERE a = 'x'AND b = 1")).toBe("SELECT * FROM t WHERE a = 'x' AND b = 1");
  });
  it('whitespace: any run of `space` characters, including none between punctuation', () => {
    expect(canonical('json', ' \r\n{\t"a":[1,2] }\n')).toBe('{"a": [1, 2]}');
    expect(canonical('sql', 'SELECT\n*\nFROM\tt')).toBe('SELECT * FROM t');
  });
});

describe('parse errors (whole messages)', () => {
  it('dangling operator', () => expectParseError('arith', '1 +', 'in.arith:1:4: expected "(", "-", Num or Func\n1 | 1 +\n  |    ^'));
  it('missing operator', () => expectParseError('arith', '1 2', 'in.arith:1:3: expected "*", "+", "-", "/", "^" or end of input\n1 | 1 2\n  |   ^'));
  it('unclosed parenthesis', () => expectParseError('arith', '(1', 'in.arith:1:3: expected ")", "*", "+", "-", "/" or "^"\n1 | (1\n  |   ^'));
  it('empty input', () => expectParseError('arith', '', 'in.arith:1:1: expected "(", "-", Num or Func\n1 | \n  | ^'));
  it('newline is not arith whitespace', () => expectParseError('arith', '1 +\n2', 'in.arith:1:4: expected "(", "-", Num or Func\n1 | 1 +\n  |    ^'));
  it('word boundary: a keyword glued to a name', () => expectParseError('sql', 'SELECTx FROM t', 'in.sql:1:1: expected "SELECT"\n1 | SELECTx FROM t\n  | ^'));
  it('a keyword is not a name of a reserved class', () => expectParseError('sql', 'SELECT * FROM SELECT', 'in.sql:1:15: expected Table\n1 | SELECT * FROM SELECT\n  |               ^'));
  it('< > is not <>', () => expectParseError('sql', 'SELECT * FROM t WHERE a< >1', 'in.sql:1:26: expected Int, Dec, Str, Table or Column\n1 | SELECT * FROM t WHERE a< >1\n  |                          ^'));
  it('second line, after the last token', () =>
    expectParseError('json', '{\n  "a": 1,\n', 'in.json:2:10: expected String\n2 |   "a": 1,\n  |          ^'));
  it('integer out of range', () =>
    expectParseError('wide', 'int 99999999999999999', 'in.wide:1:5: Int 99999999999999999 is not a safe integer value (out of range)\n1 | int 99999999999999999\n  |     ^~~~~~~~~~~~~~~~~'));
  it('number out of range', () => expectParseError('wide', '[num 1e400]', 'in.wide:1:6: Num 1e400 is not a finite number value (out of range)\n1 | [num 1e400]\n  |      ^~~~~'));
  it('shipped grammars: too many digits is a syntax error', () =>
    expectParseError('sql', 'SELECT * FROM t LIMIT 9999999999', 'in.sql:1:23: expected Int\n1 | SELECT * FROM t LIMIT 9999999999\n  |                       ^'));
  it('unknown name when names are bound', () =>
    expectParseError('arith', '1 + cube(2)', "in.arith:1:5: unknown name 'cube' for Func\n1 | 1 + cube(2)\n  |     ^~~~", { Func: ['max'] }));
  it('unbound variable', () => expectParseError('lf', 'lambda $x. p($y)', "in.lf:1:14: unbound variable '$y'\n1 | lambda $x. p($y)\n  |              ^~"));
  it('variables go out of scope after their binder', () =>
    expectParseError('lf', 'lambda $x. exists $y. (p($y)) & q($y)', "in.lf:1:35: unbound variable '$y'\n1 | lambda $x. exists $y. (p($y)) & q($y)\n  |                                   ^~"));
  it('default file name', () => {
    expect(() => createParser(grammar('arith')).parse('+')).toThrow('<input>:1:1: expected "(", "-", Num or Func');
  });
});

describe('token regexes outside the supported subset', () => {
  it('are a located error of the description check, before any parser is built', () => {
    const text = 'grammar la\nstart E\nspace " "\ntoken A = /a(?=b)b/ as text\nsort E {\n  e(a: A) = a;\n}\n';
    const { grammar: g, diagnostics } = compileDescription(text, 'la.twg');
    expect(g).toBeNull();
    expect(formatDiagnostics(diagnostics, text)).toBe(
      'la.twg:4:13: error: token class `A`: a lookahead group is not supported in token patterns (the automaton reads each character once and cannot look around)\n4 | token A = /a(?=b)b/ as text\n  |             ^~~~~\nhint: token patterns are matched by one finite automaton; see "Token regexes" in README.md for what it supports',
    );
  });
});

describe('look-ahead after optional parts', () => {
  // `mark` may begin like the first item; the parser must leave it out when "(" follows
  const text = 'grammar opt\nstart S\nspace " "\ntoken Name = /[a-z]+/ as text reserved\nsort S {\n  s(mark: M?, items: I+) = "go" mark items sep ~",";\n}\nsort M {\n  m() = "count";\n}\nsort I {\n  call(f: F) = f ~"(" ~")";\n  word(w: Name) = w;\n}\nsort F {\n  count() = "count";\n  sum() = "sum";\n}\n';
  const g = compileDescription(text, 'opt.twg').grammar!;
  const p = createParser(g);
  it.each([
    ['go count()', { kind: 's', mark: null, items: [{ kind: 'call', f: { kind: 'count' } }] }],
    ['go count count()', { kind: 's', mark: { kind: 'm' }, items: [{ kind: 'call', f: { kind: 'count' } }] }],
    ['go count x, sum()', { kind: 's', mark: { kind: 'm' }, items: [{ kind: 'word', w: 'x' }, { kind: 'call', f: { kind: 'sum' } }] }],
  ])('%s', (code, tree) => {
    expect(p.parse(code)).toEqual(tree);
    expect(printTree(g, tree)).toBe(code);
  });
});

describe('word-boundary rule for a class whose lexemes may end either way', () => {
  const text = 'grammar mixed\nstart S\nspace " "\ntoken W = /[a-z]!?/ as text\nsort S {\n  two(a: W, b: W) = a ~b;\n}\n';
  const g = compileDescription(text, 'mixed.twg').grammar!;
  const p = createParser(g);
  it('a lexeme ending in a punctuation character may touch the next one', () => {
    expect(p.parse('a!b')).toEqual({ kind: 'two', a: 'a!', b: 'b' });
    expect(printTree(g, { kind: 'two', a: 'a!', b: 'b' })).toBe('a!b');
    expect(printTree(g, { kind: 'two', a: 'a', b: 'b' })).toBe('a b');
  });
  it('a lexeme ending in a word character may not', () => {
    expect(p.parse('a b')).toEqual({ kind: 'two', a: 'a', b: 'b' });
    expect(() => p.parse('ab')).toThrow('<input>:1:2: expected a space after W a (a word character may not follow it)');
  });
});
