/**
 * Node builders for the two target grammars, in their constructor names (`grammars/lf/lf.twg`,
 * `grammars/sql/sql.twg`). Every field is present: optional fields are null, lists are arrays.
 */

/** A JSON tree node as the tree stage reads it. */
export interface Node {
  readonly kind: string;
  readonly [field: string]: unknown;
}

export type CmpName = 'lt' | 'le' | 'gt' | 'ge' | 'eq';

// ---- logical forms -------------------------------------------------------------------------

export const lf = {
  lambda: (v: string, body: Node): Node => ({ kind: 'lambda', var: v, body }),
  argmax: (v: string, body: Node, by: string): Node => ({ kind: 'argmax', var: v, body, by }),
  argmin: (v: string, body: Node, by: string): Node => ({ kind: 'argmin', var: v, body, by }),
  value: (expr: Node): Node => ({ kind: 'value', expr }),
  truth: (claim: Node): Node => ({ kind: 'truth', claim }),
  and: (left: Node, right: Node): Node => ({ kind: 'and', left, right }),
  or: (left: Node, right: Node): Node => ({ kind: 'or', left, right }),
  not: (operand: Node): Node => ({ kind: 'not', operand }),
  exists: (v: string, body: Node): Node => ({ kind: 'exists', var: v, body }),
  is: (cls: string, arg: Node): Node => ({ kind: 'is', class: cls, arg }),
  rel: (rel: string, subject: Node, object: Node): Node => ({ kind: 'rel', rel, subject, object }),
  equal: (left: Node, right: Node): Node => ({ kind: 'equal', left, right }),
  compare: (left: Node, op: CmpName, right: Node): Node => ({ kind: 'compare', left, op: { kind: op }, right }),
  var: (name: string): Node => ({ kind: 'var', name }),
  const: (name: string): Node => ({ kind: 'const', name }),
  count: (v: string, body: Node): Node => ({ kind: 'count', var: v, body }),
  measure: (fn: string, arg: Node): Node => ({ kind: 'measure', fn, arg }),
  total: (v: string, body: Node, fn: string): Node => ({ kind: 'total', var: v, body, fn }),
  literal: (value: number): Node => ({ kind: 'literal', value }),
  /** a left-nested conjunction of one or more formulas */
  conj: (parts: readonly Node[]): Node => {
    if (parts.length === 0) throw new Error('lf.conj: empty conjunction');
    return parts.slice(1).reduce((acc, p) => lf.and(acc, p), parts[0]);
  },
};

// ---- SQL -----------------------------------------------------------------------------------

export type SqlOp = 'eq' | 'ne' | 'lt' | 'le' | 'gt' | 'ge';

export interface SelectParts {
  readonly distinct?: boolean;
  readonly items: readonly Node[];
  readonly from: string;
  readonly joins?: readonly Node[];
  readonly where?: Node | null;
  readonly group?: readonly Node[];
  readonly having?: Node | null;
  readonly order?: readonly Node[];
  readonly limit?: number | null;
}

export const sql = {
  /**
   * A query: `grouped` when `group` is non-empty (then `order` holds `group_order` nodes), else
   * `select` (then `order` holds `order` nodes and there may be no `having`).
   */
  select: (p: SelectParts): Node => {
    const head = {
      distinct: p.distinct ? { kind: 'distinct' } : null,
      items: p.items,
      from: p.from,
      joins: p.joins ?? [],
      where: p.where ?? null,
    };
    if (p.group && p.group.length > 0) {
      return { kind: 'grouped', ...head, group: p.group, having: p.having ?? null, order: p.order ?? [], limit: p.limit ?? null };
    }
    if (p.having) throw new Error('sql.select: a HAVING clause needs a non-empty GROUP BY');
    return { kind: 'select', ...head, order: p.order ?? [], limit: p.limit ?? null };
  },
  col: (column: string, table: string | null = null): Node => ({ kind: 'col', table, column }),
  column: (col: Node): Node => ({ kind: 'column', col }),
  aggregate: (agg: Node): Node => ({ kind: 'aggregate', agg }),
  countRows: (): Node => ({ kind: 'count_rows' }),
  apply: (fn: 'count' | 'sum' | 'avg' | 'min' | 'max', col: Node): Node => ({
    kind: 'apply',
    fn: { kind: fn },
    distinct: null,
    col,
  }),
  join: (table: string, left: Node, right: Node): Node => ({ kind: 'join', table, left, right }),
  and: (left: Node, right: Node): Node => ({ kind: 'and', left, right }),
  or: (left: Node, right: Node): Node => ({ kind: 'or', left, right }),
  not: (operand: Node): Node => ({ kind: 'not', operand }),
  compare: (left: Node, op: SqlOp, right: Node): Node => ({ kind: 'compare', left, op: { kind: op }, right }),
  between: (subject: Node, low: Node, high: Node): Node => ({ kind: 'between', subject, low, high }),
  member: (subject: Node, query: Node): Node => ({ kind: 'member', subject, query }),
  subselect: (item: Node, from: string, where: Node | null): Node => ({ kind: 'subselect', item, from, where }),
  having: (agg: Node, op: SqlOp, value: Node): Node => ({ kind: 'having', agg, op: { kind: op }, value }),
  ref: (col: Node): Node => ({ kind: 'ref', col }),
  /** an integer or decimal literal operand, by the value */
  num: (value: number): Node =>
    Number.isInteger(value) ? { kind: 'int', value } : { kind: 'dec', value },
  str: (value: string): Node => ({ kind: 'str', value }),
  /** an ORDER BY key of an ungrouped query: a column only */
  order: (col: Node, dir: 'asc' | 'desc' | null): Node => ({ kind: 'order', col, dir: dir ? { kind: dir } : null }),
  /** a left-nested AND of zero or more conditions (null for none) */
  conj: (parts: readonly Node[]): Node | null =>
    parts.length === 0 ? null : parts.slice(1).reduce((acc, p) => sql.and(acc, p), parts[0]),
};
