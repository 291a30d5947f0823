// The scope, relation and kind clauses of the notation: every misuse gives a located error (first
// line of the formatted diagnostic compared word for word), and the shipped grammars compile to the
// IR the resolver and the masks read. The `file:line:col` convention is common practice for
// compilers (no source).
import { describe, expect, it } from 'vitest';
import { compileDescription, formatDiagnostics, loadGrammar } from '../../src/description/index.ts';

const HEAD = ['grammar g', 'start Q', 'space " "', 'token Id = /[a-z]+/ as text reserved', 'token V = /\\$[a-z]/ as text'];

/** First line of each formatted diagnostic, and the diagnostic codes. */
function check(...body: string[]): { first: string[]; codes: string[]; ok: boolean } {
  const text = [...HEAD, ...body, ''].join('\n');
  const { grammar, diagnostics } = compileDescription(text, 'g.twg');
  const first = formatDiagnostics(diagnostics, text)
    .split('\n\n')
    .filter((s) => s !== '')
    .map((s) => s.split('\n')[0]!);
  return { first, codes: diagnostics.map((d) => d.code), ok: grammar !== null };
}

const SQLISH = [
  'names T of Id',
  'names C of Id in T',
  'sort Q { q(cols: R+, from: enter T) scope = "select" cols sep ~"," "from" from; }',
  'sort R { r(t: known T?, c: known C by t) = [ t ~"." ] ~c; }',
];

describe('notation: scopes and relations', () => {
  it('a well-formed scoped grammar compiles to the documented IR', () => {
    const r = check(...SQLISH);
    expect(r.first).toEqual([]);
    const text = [...HEAD, ...SQLISH, ''].join('\n');
    const g = compileDescription(text, 'g.twg').grammar!;
    expect(g.scoped).toBe(true);
    expect(g.nameSets.map((n) => [n.name, n.owner])).toEqual([['T', null], ['C', 'T']]);
    const q = g.constructors.find((c) => c.name === 'q')!;
    expect(q.scope).toBe(true);
    expect(q.fields.map((f) => f.scoping)).toEqual(['none', 'enters']);
    const r2 = g.constructors.find((c) => c.name === 'r')!;
    expect(r2.scope).toBe(false);
    expect(r2.fields.map((f) => [f.scoping, f.by])).toEqual([['known', null], ['known', 't']]);
  });

  it('enter/known only on name-set fields', () => {
    expect(check('names T of Id', 'sort Q { q(x: enter Id, t: enter T) = x t; }').first).toEqual([
      'g.twg:7:15: error: `enter` on field `x`, whose type is a token class',
    ]);
  });

  it('`in` must name another name set, and owner chains must end', () => {
    expect(check('names T of Id in Tx', 'sort Q { q(t: T) = t; }').first).toEqual(['g.twg:6:18: error: undefined name set `Tx` after `in`']);
    expect(check('names T of Id in Q', 'sort Q { q(t: T) = t; }').first).toEqual(['g.twg:6:18: error: `Q` is a sort; `in` needs a name set']);
    expect(check('names T of Id in T', 'sort Q { q(t: T) = t; }').first).toEqual(['g.twg:6:18: error: name set `T` cannot belong to itself']);
    expect(check('names T of Id in U', 'names U of Id in T', 'sort Q { q(t: T, u: U) = t u; }').first).toEqual([
      'g.twg:6:1: error: name set `T` belongs to itself through T → U → T',
      'g.twg:7:1: error: name set `U` belongs to itself through U → T → U',
    ]);
  });

  it('`by` needs `known`, an owner, and a sibling field of the owner set', () => {
    expect(check('names T of Id', 'names C of Id in T', 'sort Q { q(t: enter T, c: C by t) = t c; }').first).toEqual([
      'g.twg:8:32: error: `by` on field `c`, which is not `known`',
    ]);
    expect(check('names T of Id', 'names C of Id', 'sort Q { q(t: enter T, c: known C by t) = t c; }').codes).toEqual(['by-without-owner']);
    expect(check('names T of Id', 'names C of Id in T', 'sort Q { q(t: enter T, c: known C by s) = t c; }').first).toEqual([
      'g.twg:8:38: error: `q` has no field `s`',
    ]);
    expect(check('names T of Id', 'names C of Id in T', 'sort Q { q(t: enter T*, c: known C by t) = t c; }').first).toEqual([
      'g.twg:8:39: error: field `t` after `by` must be one (or an optional) `T`',
    ]);
  });

  it('`known` with nothing ever introduced cannot resolve', () => {
    expect(check('names T of Id', 'sort Q { q(t: known T) = t; }').first).toEqual([
      'g.twg:7:12: error: field `t` must be `known`, but no field of the grammar is `enter T`',
    ]);
    expect(check('names T of Id', 'names C of Id in T', 'sort Q { q(c: known C) = c; }').first).toEqual([
      'g.twg:8:12: error: field `c` must be `known`, but no field of the grammar is `enter T`',
    ]);
  });
});

const LFISH = [
  'kinds K',
  'names E of Id with (is: K)',
  'names P of Id with (a: K, b: K)',
];

describe('notation: kinds', () => {
  it('a well-kinded grammar compiles to the documented IR', () => {
    const body = [
      ...LFISH,
      'sort Q { p(rel: P, x: Tm kind rel.a, y: Tm kind rel.b) = rel ~"(" ~x ~"," y ~")"; }',
      'sort Tm kind K { c(e: E kind self) = e; }',
    ];
    expect(check(...body).first).toEqual([]);
    const g = compileDescription([...HEAD, ...body, ''].join('\n'), 'g.twg').grammar!;
    expect(g.kindFamilies.map((f) => f.name)).toEqual(['K']);
    expect(g.nameSets.map((n) => n.slots.map((s) => `${s.name}:${s.family}`))).toEqual([['is:K'], ['a:K', 'b:K']]);
    expect(g.sorts.map((s) => s.family)).toEqual([null, 'K']);
    const p = g.constructors.find((c) => c.name === 'p')!;
    expect(p.fields.map((f) => f.kindOf && { ...f.kindOf, span: undefined })).toEqual([
      null,
      { kind: 'field', field: 'rel', slot: 'a', span: undefined },
      { kind: 'field', field: 'rel', slot: 'b', span: undefined },
    ]);
    expect(g.constructors.find((c) => c.name === 'c')!.fields[0]!.kindOf!.kind).toBe('self');
  });

  it('families must be declared and are not field types', () => {
    expect(check('names E of Id with (is: Kx)', 'sort Q { q(e: E) = e; }').first).toEqual(['g.twg:6:25: error: undefined kind family `Kx`']);
    expect(check('kinds K', 'names E of Id with (is: Id)', 'sort Q { q(e: E) = e; }').first).toEqual([
      'g.twg:7:25: error: `Id` is a token class, not a kind family',
    ]);
    expect(check('kinds K', 'sort Q { q(k: K) = k; }').first).toEqual(['g.twg:7:15: error: field `k` has type `K`, which is a kind family']);
    expect(check('kinds K', 'names E of Id with (is: K, is: K)', 'sort Q { q(e: E) = e; }').first).toEqual([
      'g.twg:7:28: error: duplicate kind slot `is` of name set `E`',
    ]);
  });

  it('kind clauses need kinded fields of one family', () => {
    expect(check(...LFISH, 'sort Q { q(e: E, t: Id kind e) = e t; }').first).toEqual([
      'g.twg:9:24: error: field `t` has no kind: only `new`/`bound` variables carry a kind',
    ]);
    expect(check(...LFISH, 'sort Q { q(e: E kind self) = e; }').first).toEqual([
      'g.twg:9:17: error: `self` has no kind: sort `Q` is not declared with `kind`',
    ]);
    expect(check(...LFISH, 'sort Q { q(e: E, p: P kind e) = e p; }').first).toEqual([
      'g.twg:9:23: error: field `p` has no kind: name set P has 2 kind slots: name one (`p.slot`)',
    ]);
    expect(check(...LFISH, 'sort Q { q(p: P, e: E kind p.c) = p e; }').first).toEqual([
      'g.twg:9:30: error: field `p` (P) has no kind slot `c`',
    ]);
    expect(check(...LFISH, 'sort Q { q(e: E kind f) = e; }').first).toEqual([
      'g.twg:9:22: error: `q` has no field `f` (and `f` is not `self`)',
    ]);
    expect(check(...LFISH, 'sort Q { q(e: E kind e) = e; }').first).toEqual(['g.twg:9:17: error: field `e` is given its own kind']);
    expect(check(...LFISH, 'kinds L', 'names F of Id with (is: L)', 'sort Q { q(e: E, f: F kind e) = e f; }').first).toEqual([
      'g.twg:11:23: error: field `f` has a kind of family `L`, but e has one of family `K`',
    ]);
    // variables carry a kind when their token class says so
    expect(check(...LFISH, 'sort Q { q(v: new V, e: E kind v) = v e; }').first).toEqual([
      'g.twg:9:32: error: field `v` has no kind: token class V is not declared with `kind`',
    ]);
  });
});

describe('shipped grammars', () => {
  it('sql: queries and subqueries open scopes; FROM/JOIN enter tables; column references are known', () => {
    const g = loadGrammar('grammars/sql/sql.twg');
    expect(g.constructors.filter((c) => c.scope).map((c) => c.name)).toEqual(['select', 'grouped', 'subselect']);
    const marked = g.constructors.flatMap((c) => c.fields.filter((f) => f.scoping !== 'none').map((f) => `${c.name}.${f.name}:${f.scoping}${f.by ? ' by ' + f.by : ''}`));
    expect(marked).toEqual(['select.from:enters', 'grouped.from:enters', 'col.table:known', 'col.column:known by table', 'join.table:enters', 'subselect.from:enters']);
    expect(g.nameSets.find((n) => n.name === 'Column')!.owner).toBe('Table');
  });

  it('lf: entities, classes, relations and measures carry kinds; Terms and variables are kinded', () => {
    const g = loadGrammar('grammars/lf/lf.twg');
    expect(g.nameSets.map((n) => `${n.name}(${n.slots.map((s) => s.name).join(',')})`)).toEqual(['Entity(is)', 'Class(arg)', 'Rel(subject,object)', 'Measure(arg)']);
    expect(g.sorts.find((s) => s.name === 'Term')!.family).toBe('Kind');
    expect(g.tokens.find((t) => t.name === 'Var')!.family).toBe('Kind');
  });
});
