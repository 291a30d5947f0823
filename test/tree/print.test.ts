/**
 * Printer: exact canonical text for hand-built trees (README, "Layout items", "Operators",
 * "Canonical layout"). Parenthesis cases follow the usual conventions of arithmetic (common
 * practice, no source): `(1 + 2) * 3`, `1 - (2 - 3)`, right-associative `^`, and unary minus
 * binding looser than `^` (`-2 ^ 2` is `-(2 ^ 2)`, as in mathjs and most calculators).
 */
import { describe, expect, it } from 'vitest';
import { compileDescription, loadGrammar } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { createParser, printTree, TreeError, type Tree, type TreeValue } from '../../src/tree/index.ts';

const grammars: Record<string, Grammar> = {};
const grammar = (name: string) => (grammars[name] ??= loadGrammar(`grammars/${name}/${name}.twg`));

/** A node: `n('add', {left, right})`. */
const n = (kind: string, fields: Record<string, TreeValue> = {}): Tree => ({ kind, ...fields });

function expectPrinted(g: string, tree: Tree, code: string): void {
  expect(printTree(grammar(g), tree)).toBe(code);
}

// ---- arith ----
const num = (value: number) => n('num', { value });
const bin = (kind: string) => (left: Tree, right: Tree) => n(kind, { left, right });
const add = bin('add'), sub = bin('sub'), mul = bin('mul'), div = bin('div');
const pow = (base: Tree, exponent: Tree) => n('pow', { base, exponent });
const neg = (operand: Tree) => n('neg', { operand });
const call = (fn: string, ...args: Tree[]) => n('call', { fn, args });

describe('print arith', () => {
  it('README worked example', () => expectPrinted('arith', mul(add(num(1), num(2)), call('max', num(3), neg(num(4)))), '(1 + 2) * max(3, -4)'));
  it('(1 + 2) * 3', () => expectPrinted('arith', mul(add(num(1), num(2)), num(3)), '(1 + 2) * 3'));
  it('1 + 2 * 3', () => expectPrinted('arith', add(num(1), mul(num(2), num(3))), '1 + 2 * 3'));
  it('1 - 2 - 3', () => expectPrinted('arith', sub(sub(num(1), num(2)), num(3)), '1 - 2 - 3'));
  it('1 - (2 - 3)', () => expectPrinted('arith', sub(num(1), sub(num(2), num(3))), '1 - (2 - 3)'));
  it('1 - (2 + 3)', () => expectPrinted('arith', sub(num(1), add(num(2), num(3))), '1 - (2 + 3)'));
  it('8 / (4 / 2)', () => expectPrinted('arith', div(num(8), div(num(4), num(2))), '8 / (4 / 2)'));
  it('2 ^ 3 ^ 4', () => expectPrinted('arith', pow(num(2), pow(num(3), num(4))), '2 ^ 3 ^ 4'));
  it('(2 ^ 3) ^ 4', () => expectPrinted('arith', pow(pow(num(2), num(3)), num(4)), '(2 ^ 3) ^ 4'));
  it('-2 ^ 2', () => expectPrinted('arith', neg(pow(num(2), num(2))), '-2 ^ 2'));
  it('(-2) ^ 2', () => expectPrinted('arith', pow(neg(num(2)), num(2)), '(-2) ^ 2'));
  it('2 ^ (-1)', () => expectPrinted('arith', pow(num(2), neg(num(1))), '2 ^ (-1)'));
  it('--2', () => expectPrinted('arith', neg(neg(num(2))), '--2'));
  it('-(1 + 2)', () => expectPrinted('arith', neg(add(num(1), num(2))), '-(1 + 2)'));
  it('1 - -2', () => expectPrinted('arith', sub(num(1), neg(num(2))), '1 - -2'));
  it('-2 * 3', () => expectPrinted('arith', mul(neg(num(2)), num(3)), '-2 * 3'));
  it('numbers print like JSON.stringify', () => expectPrinted('arith', add(num(0.5), add(num(0.000001), num(999999999.000001))), '0.5 + (0.000001 + 999999999.000001)'));
  it('nested calls', () => expectPrinted('arith', call('f', call('g'.repeat(1), num(1)), add(num(1), num(2))), 'f(g(1), 1 + 2)'));
});

// ---- lf ----
const v = (name: string) => n('var', { name });
const c = (name: string) => n('const', { name });
const is = (cls: string, arg: Tree) => n('is', { class: cls, arg });
const lit = (value: number) => n('literal', { value });

describe('print lf', () => {
  it('lambda with a comparison', () =>
    expectPrinted('lf', n('lambda', { var: '$x', body: n('and', { left: is('orchard', v('$x')), right: n('compare', { left: n('measure', { fn: 'altitude', arg: v('$x') }), op: n('gt'), right: lit(400) }) }) }), 'lambda $x. orchard($x) & altitude($x) > 400'));
  it('implies is right-associative', () => {
    const p = is('p', c('a')), q = is('q', c('a')), r = is('r', c('a'));
    expectPrinted('lf', n('truth', { claim: n('implies', { left: p, right: n('implies', { left: q, right: r }) }) }), 'holds: p(a) -> q(a) -> r(a)');
    expectPrinted('lf', n('truth', { claim: n('implies', { left: n('implies', { left: p, right: q }), right: r }) }), 'holds: (p(a) -> q(a)) -> r(a)');
  });
  it('not over a conjunction', () =>
    expectPrinted('lf', n('truth', { claim: n('not', { operand: n('or', { left: is('p', c('a')), right: is('q', c('b')) }) }) }), 'holds: ~(p(a) | q(b))'));
  it('count and sum', () =>
    expectPrinted('lf', n('value', { expr: n('diff', { left: n('count', { var: '$x', body: is('lot', v('$x')) }), right: n('total', { var: '$y', body: is('lot', v('$y')), fn: 'tonnes' }) }) }), 'value: count $x. (lot($x)) - sum $y. (lot($y)) of tonnes'));
  it('argmax with relation', () =>
    expectPrinted('lf', n('argmax', { var: '$x', body: n('rel', { rel: 'owns', subject: c('mara'), object: v('$x') }), by: 'hectares' }), 'argmax $x. (owns(mara, $x)) by hectares'));
});

// ---- sql ----
const col = (column: string, table: string | null = null) => n('col', { table, column });
const ref = (column: string) => n('ref', { col: col(column) });
const int = (value: number) => n('int', { value });
const cmp = (left: Tree, op: string, right: Tree) => n('compare', { left, op: n(op), right });
const select = (fields: Record<string, TreeValue>): Tree =>
  n('select', { distinct: null, items: [n('star')], from: 't', joins: [], where: null, order: [], limit: null, ...fields });

describe('print sql', () => {
  it('SELECT *', () => expectPrinted('sql', select({}), 'SELECT * FROM t'));
  it('NOT (a = 1 OR b = 2)', () =>
    expectPrinted('sql', select({ where: n('not', { operand: n('or', { left: cmp(ref('a'), 'eq', int(1)), right: cmp(ref('b'), 'eq', int(2)) }) }) }), 'SELECT * FROM t WHERE NOT (a = 1 OR b = 2)'));
  it('AND binds tighter than OR', () =>
    expectPrinted('sql', select({ where: n('and', { left: n('or', { left: cmp(ref('a'), 'eq', int(1)), right: cmp(ref('b'), 'eq', int(2)) }), right: cmp(ref('c'), 'lt', int(3)) }) }), 'SELECT * FROM t WHERE (a = 1 OR b = 2) AND c < 3'));
  it('ORDER BY a column', () =>
    expectPrinted('sql', select({ order: [n('order', { col: col('name'), dir: n('asc') })], limit: 3 }), 'SELECT * FROM t ORDER BY name ASC LIMIT 3'));
  it('every optional clause of a grouped query, separators glued', () =>
    expectPrinted(
      'sql',
      n('grouped', {
        distinct: n('distinct'),
        items: [n('column', { col: col('name', 'g') }), n('aggregate', { agg: n('apply', { fn: n('count'), distinct: n('distinct'), col: col('id') }) })],
        from: 'g',
        joins: [n('join', { table: 'o', left: col('id', 'g'), right: col('grower', 'o') })],
        where: n('like', { subject: col('name'), pattern: "O'Hara%" }),
        group: [col('name', 'g'), col('id')],
        having: n('having', { agg: n('count_rows'), op: n('ge'), value: n('dec', { value: 2.5 }) }),
        order: [n('group_order', { key: n('by_column', { col: col('name') }), dir: n('desc') }), n('group_order', { key: n('by_aggregate', { agg: n('count_rows') }), dir: null })],
        limit: 10,
      }),
      "SELECT DISTINCT g.name, COUNT(DISTINCT id) FROM g JOIN o ON g.id = o.grower WHERE name LIKE 'O''Hara%' GROUP BY g.name, id HAVING COUNT(*) >= 2.5 ORDER BY name DESC, COUNT(*) LIMIT 10",
    ));
  it('absent optional inside a glued template: COUNT(id)', () =>
    expectPrinted('sql', select({ items: [n('aggregate', { agg: n('apply', { fn: n('max'), distinct: null, col: col('id') }) })] }), 'SELECT MAX(id) FROM t'));
  it('IN subquery', () =>
    expectPrinted('sql', select({ where: n('member', { subject: col('id'), query: n('subselect', { item: col('grower'), from: 'o', where: null }) }) }), 'SELECT * FROM t WHERE id IN (SELECT grower FROM o)'));
});

// ---- json ----
const str = (value: string) => n('string', { value });
describe('print json', () => {
  it('object and array spacing', () =>
    expectPrinted('json', n('object', { members: [n('member', { key: 'a', value: n('array', { items: [n('number', { value: '1' }), n('true'), n('null')] }) }), n('member', { key: 'b', value: n('object', { members: [] }) })] }), '{"a": [1, true, null], "b": {}}'));
  it('string escapes are JSON.stringify', () => expectPrinted('json', str('tab\there "q" \\ \u0001 é'), '"tab\\there \\"q\\" \\\\ \\u0001 é"'));
  it('numbers print their lexemes (`as text`)', () => expectPrinted('json', n('array', { items: [n('number', { value: '-0.50' }), n('number', { value: '1e999' })] }), '[-0.50, 1e999]'));
});

describe('print rejects invalid trees with a JSON path', () => {
  it('wrong kind', () => {
    expect(() => printTree(grammar('arith'), add(num(1), n('star')))).toThrow(TreeError);
    expect(() => printTree(grammar('arith'), add(num(1), n('star')))).toThrow('$.right.kind: expected Expr (one of add, sub, mul, div, neg, pow, call, num), got "star", which is not a constructor');
    expect(() => printTree(grammar('sql'), select({ where: n('star') }))).toThrow('$.where.kind: expected Cond (one of or, and, not, compare, between, like, member), got "star", a constructor of Item');
  });
  it('value the token cannot spell', () =>
    expect(() => printTree(grammar('arith'), num(-1))).toThrow('$.value: Num cannot spell -1: -1 does not match /[0-9]{1,9}(?:\\.[0-9]{1,6})?/'));
  it('a value beyond the bounded digits', () =>
    expect(() => printTree(grammar('arith'), num(1e20))).toThrow('$.value: Num cannot spell 100000000000000000000: 100000000000000000000 does not match /[0-9]{1,9}(?:\\.[0-9]{1,6})?/'));
});

describe('glue never merges two tokens', () => {
  // a description whose layouts glue two names, and "<" to "=" although "<=" is a keyword
  const text = 'grammar glue\nstart S\nspace " "\ntoken Name = /[a-z]+/ as text reserved\nsort S {\n  pair(a: Name, b: Name) = a ~b;\n  arrow(a: Name) = "<" ~"=" a;\n  le(a: Name) = "<=" ~a;\n}\n';
  const g = compileDescription(text, 'glue.twg').grammar!;
  it.each([
    [{ kind: 'pair', a: 'x', b: 'y' }, 'x y'],
    [{ kind: 'arrow', a: 'x' }, '< = x'],
    [{ kind: 'le', a: 'x' }, '<=x'],
  ])('%j prints as %s and parses back', (tree, code) => {
    expect(printTree(g, tree)).toBe(code);
    expect(createParser(g).parse(code)).toEqual(tree);
  });
});
