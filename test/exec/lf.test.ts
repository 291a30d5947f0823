import { describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { buildSqliteFileFrom } from '../../src/exec/database.ts';
import { factNames, makeFactBase } from '../../src/exec/facts.ts';
import { evaluateLf } from '../../src/exec/lf.ts';
import type { Tree } from '../../src/tree/index.ts';

// Trees are written as JSON (the README's tree format for grammars/lf/lf.twg).
const v = (name: string): Tree => ({ kind: 'var', name });
const c = (name: string): Tree => ({ kind: 'const', name });
const is = (cls: string, arg: Tree): Tree => ({ kind: 'is', class: cls, arg });
const rel = (r: string, subject: Tree, object: Tree): Tree => ({ kind: 'rel', rel: r, subject, object });
const and = (left: Tree, right: Tree): Tree => ({ kind: 'and', left, right });
const lit = (value: number): Tree => ({ kind: 'literal', value });
const cmp = (left: Tree, op: string, right: Tree): Tree => ({ kind: 'compare', left, op: { kind: op }, right });
const meas = (fn: string, arg: Tree): Tree => ({ kind: 'measure', fn, arg });

const small = makeFactBase({
  entities: ['ann', 'bo', 'cy', 'pear_tree', 'plum_tree'],
  classes: { person: ['ann', 'bo', 'cy'], tree: ['pear_tree', 'plum_tree'] },
  relations: { tends: [['ann', 'pear_tree'], ['bo', 'pear_tree'], ['bo', 'plum_tree']] },
  measures: { age: [['ann', 40], ['bo', 52], ['cy', 52]], height: [['pear_tree', 3.5], ['plum_tree', 2.25]] },
});

describe('evaluateLf on a small model', () => {
  it('lambda denotes the set of satisfying entities', () => {
    const tree = { kind: 'lambda', var: '$x', body: and(is('person', v('$x')), { kind: 'exists', var: '$y', body: rel('tends', v('$x'), v('$y')) }) };
    expect(evaluateLf(small, tree)).toEqual({ ok: true, value: { type: 'set', members: ['ann', 'bo'] } });
  });

  it('forall, implies, not and equality follow classical truth tables', () => {
    // every tree is tended by bo
    const all = { kind: 'truth', claim: { kind: 'forall', var: '$t', body: { kind: 'implies', left: is('tree', v('$t')), right: rel('tends', c('bo'), v('$t')) } } };
    expect(evaluateLf(small, all)).toEqual({ ok: true, value: { type: 'truth', value: true } });
    const notAnn = { kind: 'truth', claim: { kind: 'forall', var: '$t', body: { kind: 'implies', left: is('tree', v('$t')), right: rel('tends', c('ann'), v('$t')) } } };
    expect(evaluateLf(small, notAnn)).toEqual({ ok: true, value: { type: 'truth', value: false } });
    const who = { kind: 'lambda', var: '$x', body: and(is('person', v('$x')), { kind: 'not', operand: { kind: 'equal', left: v('$x'), right: c('bo') } }) };
    expect(evaluateLf(small, who)).toEqual({ ok: true, value: { type: 'set', members: ['ann', 'cy'] } });
  });

  it('count, sum, measures and comparisons', () => {
    const n = { kind: 'value', expr: { kind: 'count', var: '$x', body: and(is('person', v('$x')), cmp(meas('age', v('$x')), 'ge', lit(50))) } };
    expect(evaluateLf(small, n)).toEqual({ ok: true, value: { type: 'number', value: 2 } });
    const total = { kind: 'value', expr: { kind: 'total', var: '$t', body: is('tree', v('$t')), fn: 'height' } };
    expect(evaluateLf(small, total)).toEqual({ ok: true, value: { type: 'number', value: 5.75 } });
    const diff = { kind: 'value', expr: { kind: 'diff', left: meas('age', c('bo')), right: meas('age', c('ann')) } };
    expect(evaluateLf(small, diff)).toEqual({ ok: true, value: { type: 'number', value: 12 } });
    const none = { kind: 'value', expr: { kind: 'total', var: '$t', body: and(is('tree', v('$t')), is('person', v('$t'))), fn: 'height' } };
    expect(evaluateLf(small, none)).toEqual({ ok: true, value: { type: 'number', value: 0 } });
  });

  it('argmax keeps every tied entity; argmin picks the smallest', () => {
    expect(evaluateLf(small, { kind: 'argmax', var: '$x', body: is('person', v('$x')), by: 'age' })).toEqual({ ok: true, value: { type: 'best', members: ['bo', 'cy'] } });
    expect(evaluateLf(small, { kind: 'argmin', var: '$x', body: is('person', v('$x')), by: 'age' })).toEqual({ ok: true, value: { type: 'best', members: ['ann'] } });
  });

  it('reports runtime errors with the JSON path', () => {
    expect(evaluateLf(small, { kind: 'value', expr: meas('age', c('pear_tree')) })).toEqual({ ok: false, error: 'measure age is not defined for pear_tree (at $.expr.fn)' });
    expect(evaluateLf(small, { kind: 'lambda', var: '$x', body: is('person', v('$y')) })).toEqual({ ok: false, error: 'unbound variable $y (at $.body.arg.name)' });
    expect(evaluateLf(small, { kind: 'truth', claim: is('ghost', c('ann')) })).toEqual({ ok: false, error: 'unknown class ghost (at $.claim.class)' });
    expect(evaluateLf(small, { kind: 'truth', claim: is('person', c('zed')) })).toEqual({ ok: false, error: 'unknown entity zed (at $.claim.arg.name)' });
  });

  it('stops past the step limit instead of running on', () => {
    // 5 entities, four nested binders over a body that is never true: 5^4 bodies of 4 steps each
    let body: Tree = { kind: 'not', operand: { kind: 'equal', left: v('$a'), right: v('$d') } };
    body = { kind: 'not', operand: { kind: 'or', left: body, right: { kind: 'equal', left: v('$a'), right: v('$d') } } };
    for (const x of ['$d', '$c', '$b']) body = { kind: 'exists', var: x, body };
    const tree = { kind: 'lambda', var: '$a', body };
    expect(evaluateLf(small, tree, { stepLimit: 500 })).toEqual({ ok: false, error: 'evaluation stopped after 500 steps (step limit)' });
    expect(evaluateLf(small, tree)).toEqual({ ok: true, value: { type: 'set', members: [] } });
  });

  it('binds the names of its fact base', () => {
    expect(factNames(small)).toEqual({
      Entity: ['ann', 'bo', 'cy', 'pear_tree', 'plum_tree'],
      Class: ['person', 'tree'],
      Rel: ['tends'],
      Measure: ['age', 'height'],
    });
  });
});

describe('evaluateLf against SQLite on the cooperative rows', () => {
  // A fact base read from the demo database with an ad-hoc naming (the dataset's lexicon is used
  // in the full cross-check); SQLite answers the same questions as the reference.
  const dir = mkdtempSync(join(tmpdir(), 'tw-lf-'));
  const dbPath = join(dir, 'coop.sqlite');
  buildSqliteFileFrom('grammars/sql/coop.sql', dbPath);
  const db = new Database(dbPath, { readonly: true });
  const growers = db.prepare('SELECT id, village, joined_year FROM growers').all() as { id: number; village: string; joined_year: number }[];
  const orchards = db.prepare('SELECT id, grower_id, hectares FROM orchards').all() as { id: number; grower_id: number; hectares: number }[];
  const villages = [...new Set(growers.map((g) => g.village))];
  const vname = (s: string) => s.toLowerCase().replace(/ /g, '_');
  const facts = makeFactBase({
    entities: [...growers.map((g) => `g${g.id}`), ...orchards.map((o) => `o${o.id}`), ...villages.map(vname)],
    classes: { grower: growers.map((g) => `g${g.id}`), orchard: orchards.map((o) => `o${o.id}`) },
    relations: { lives_in: growers.map((g) => [`g${g.id}`, vname(g.village)] as const), owns: orchards.map((o) => [`g${o.grower_id}`, `o${o.id}`] as const) },
    measures: { joined: growers.map((g) => [`g${g.id}`, g.joined_year] as const), hectares: orchards.map((o) => [`o${o.id}`, o.hectares] as const) },
  });

  it('growers of Oakmere who own an orchard over 5 ha', () => {
    const tree = {
      kind: 'lambda', var: '$g',
      body: and(and(is('grower', v('$g')), rel('lives_in', v('$g'), c('oakmere'))),
        { kind: 'exists', var: '$o', body: and(rel('owns', v('$g'), v('$o')), cmp(meas('hectares', v('$o')), 'gt', lit(5))) }),
    };
    const sql = "SELECT DISTINCT 'g' || g.id FROM growers g JOIN orchards o ON o.grower_id = g.id WHERE g.village = 'Oakmere' AND o.hectares > 5";
    const want = (db.prepare(sql).raw(true).all() as string[][]).map((r) => r[0]).sort();
    expect(want.length).toBeGreaterThan(0);
    expect(evaluateLf(facts, tree)).toEqual({ ok: true, value: { type: 'set', members: want } });
  });

  it('total hectares of the largest grower and the count of early joiners', () => {
    const sum = { kind: 'value', expr: { kind: 'total', var: '$o', body: rel('owns', c('g12'), v('$o')), fn: 'hectares' } };
    const want = (db.prepare('SELECT SUM(hectares) FROM orchards WHERE grower_id = 12').raw(true).get() as number[])[0];
    const got = evaluateLf(facts, sum);
    expect(got.ok && (got.value as { value: number }).value).toBeCloseTo(want, 9);
    const cnt = { kind: 'value', expr: { kind: 'count', var: '$g', body: and(is('grower', v('$g')), cmp(meas('joined', v('$g')), 'lt', lit(2000))) } };
    const wantCount = (db.prepare('SELECT COUNT(*) FROM growers WHERE joined_year < 2000').raw(true).get() as number[])[0];
    expect(evaluateLf(facts, cnt)).toEqual({ ok: true, value: { type: 'number', value: wantCount } });
    db.close();
    rmSync(dir, { recursive: true, force: true });
  });
});
