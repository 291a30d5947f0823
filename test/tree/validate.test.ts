/**
 * validateTree: the first problem as a JSON path and a message, word for word.
 */
import { describe, expect, it } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { validateTree, type TreeIssue } from '../../src/tree/index.ts';

const grammars: Record<string, Grammar> = {};
const grammar = (name: string) => (grammars[name] ??= loadGrammar(`grammars/${name}/${name}.twg`));

const num = (value: unknown) => ({ kind: 'num', value });
const col = (column: string) => ({ kind: 'col', table: null, column });
const select = (fields: Record<string, unknown>) => ({ kind: 'select', distinct: null, items: [{ kind: 'star' }], from: 't', joins: [], where: null, order: [], limit: null, ...fields });

function expectIssue(g: string, value: unknown, issue: TreeIssue | null, opts: Parameters<typeof validateTree>[2] = {}): void {
  expect(validateTree(grammar(g), value, opts)).toEqual(issue);
}

describe('validateTree', () => {
  it('accepts a well-typed tree', () => expectIssue('arith', { kind: 'add', left: num(1), right: num(2.5) }, null));
  it('not a node', () => expectIssue('sql', select({ where: 'foo' }), { path: '$.where', message: 'expected Cond, got "foo"' }));
  it('missing kind', () => expectIssue('arith', { left: 1 }, { path: '$.kind', message: 'expected the name of a constructor of Expr, got nothing' }));
  it('missing field', () => expectIssue('arith', { kind: 'add', left: num(1) }, { path: '$', message: 'missing field "right" of add' }));
  it('extra field', () => expectIssue('arith', { kind: 'num', value: 1, note: 'x' }, { path: '$.note', message: 'num has no field "note"' }));
  it('optional must be null, not absent', () => {
    const t = select({});
    delete (t as Record<string, unknown>).limit;
    expectIssue('sql', t, { path: '$', message: 'missing field "limit" of select' });
  });
  it('list fields are arrays', () => expectIssue('sql', select({ joins: null }), { path: '$.joins', message: 'expected a list of Join, got null' }));
  it('non-empty lists', () => expectIssue('sql', select({ items: [] }), { path: '$.items', message: 'expected at least one Item (field items of select is non-empty)' }));
  it('paths index into lists', () =>
    expectIssue('sql', select({ items: [{ kind: 'star' }, { kind: 'column', col: { kind: 'col', table: 3, column: 'a' } }] }), { path: '$.items[1].col.table', message: 'expected a Table name (a string), got 3' }));
  it('token kinds: number', () => expectIssue('arith', num('1'), { path: '$.value', message: 'expected Num (a finite number), got "1"' }));
  it('token kinds: int must be a safe integer', () => expectIssue('sql', select({ limit: 1.5 }), { path: '$.limit', message: 'expected Int (a safe integer), got 1.5' }));
  it('token regex: the printed lexeme must match', () =>
    expectIssue('arith', num(1e21), { path: '$.value', message: 'Num cannot spell 1e+21: 1e+21 does not match /[0-9]{1,9}(?:\\.[0-9]{1,6})?/' }));
  it('token regex: Dec cannot spell an integer', () =>
    expectIssue('sql', select({ where: { kind: 'compare', left: { kind: 'ref', col: col('a') }, op: { kind: 'eq' }, right: { kind: 'dec', value: 3 } } }), { path: '$.where.right.value', message: 'Dec cannot spell 3: 3 does not match /[0-9]{1,9}\\.(?:[0-9]{5}[1-9]|[0-9]{4}[1-9]|[0-9]{3}[1-9]|[0-9]{2}[1-9]|[0-9][1-9]|[1-9])/' }));
  it('-0 is not printable', () => expectIssue('arith', num(-0), { path: '$.value', message: 'Num cannot spell -0 exactly (it prints as 0)' }));
  it('json numbers are lexemes', () => expectIssue('json', { kind: 'number', value: 5 }, { path: '$.value', message: 'expected Number (a string), got 5' }));
  it('reserved classes refuse keywords', () => expectIssue('sql', select({ from: 'SELECT' }), { path: '$.from', message: "'SELECT' is a keyword, not a lexeme of Ident" }));
  it('names must be lexemes of their token', () => expectIssue('sql', select({ from: 'a b' }), { path: '$.from', message: "'a b' is not a lexeme of Ident /[A-Za-z_][A-Za-z0-9_]*/" }));
  it('bound names', () => {
    expectIssue('sql', select({ from: 'orchards' }), { path: '$.from', message: "unknown name 'orchards' for Table" }, { names: { Table: ['growers'] } });
    expectIssue('sql', select({ from: 'orchards' }), null, { names: { Column: ['id'] } });
  });
  it('variable scoping', () => {
    const lambda = (v: string, body: unknown) => ({ kind: 'lambda', var: v, body });
    const is = (name: string) => ({ kind: 'is', class: 'p', arg: { kind: 'var', name } });
    expectIssue('lf', lambda('$x', is('$x')), null);
    expectIssue('lf', lambda('$x', is('$y')), { path: '$.body.arg.name', message: "unbound variable '$y'" });
    expectIssue('lf', lambda('$x', { kind: 'and', left: { kind: 'exists', var: '$y', body: is('$y') }, right: is('$y') }), { path: '$.body.right.arg.name', message: "unbound variable '$y'" });
  });
  it('a chosen sort', () => expectIssue('sql', { kind: 'star' }, null, { sort: 'Item' }));
});
