/**
 * Described entity sets and their two translations. A `Desc` ("orchards above 400 m owned by
 * growers from Oakmere") is compiled once to a logical-form formula and once to an SQL condition;
 * both translations follow the tables of `lexicon.ts`, so the two gold programs of a question mean
 * the same thing by construction (and the SQL result on the demo database is the reference).
 */
import {
  CLASSES,
  type EntityClass,
  constantOf,
  measure,
  relation,
  subclass,
} from '../exec/lexicon.ts';
import { type CmpName, lf, type Node, sql } from './trees.ts';

/** The other side of a relation: a named entity (or village), or a described set. */
export type Target =
  | { readonly kind: 'const'; readonly name: string }
  | { readonly kind: 'set'; readonly desc: Desc };

/** A restriction on the described entity x. */
export type Mod =
  | { readonly k: 'cmp'; readonly measure: string; readonly op: CmpName; readonly value: number }
  | { readonly k: 'between'; readonly measure: string; readonly lo: number; readonly hi: number }
  /** `side` is the argument position x takes in the relation */
  | { readonly k: 'rel'; readonly rel: string; readonly side: 'subject' | 'object'; readonly target: Target }
  | { readonly k: 'isa'; readonly sub: string }
  | { readonly k: 'not'; readonly mod: Mod }
  | { readonly k: 'or'; readonly left: Mod; readonly right: Mod };

/** The entities of `cls` (or of subclass `sub`) satisfying every mod. */
export interface Desc {
  readonly cls: EntityClass;
  readonly sub: string | null;
  readonly mods: readonly Mod[];
}

/** Variable names in binding order. */
const VAR_NAMES = ['$x', '$y', '$z', '$w', '$u', '$v'];

export class VarSupply {
  private n = 0;
  next(): string {
    const v = VAR_NAMES[this.n++];
    if (!v) throw new Error('VarSupply: too many nested variables');
    return v;
  }
}

/** The class of the other side of `rel` when x takes `side`. */
export function otherSide(rel: string, side: 'subject' | 'object'): EntityClass | 'village' {
  const r = relation(rel);
  return side === 'subject' ? r.object : r.subject;
}

// ---- logical form --------------------------------------------------------------------------

/** The conjuncts saying that `term` is in the described set (class atom first). */
export function lfDesc(desc: Desc, term: Node, vars: VarSupply): Node[] {
  return [lf.is(desc.sub ?? desc.cls, term), ...desc.mods.flatMap((m) => lfMod(m, term, vars))];
}

export function lfMod(m: Mod, term: Node, vars: VarSupply): Node[] {
  switch (m.k) {
    case 'cmp':
      return [lf.compare(lf.measure(m.measure, term), m.op, lf.literal(m.value))];
    case 'between':
      return [
        lf.compare(lf.measure(m.measure, term), 'ge', lf.literal(m.lo)),
        lf.compare(lf.measure(m.measure, term), 'le', lf.literal(m.hi)),
      ];
    case 'isa':
      return [lf.is(m.sub, term)];
    case 'not':
      return [lf.not(lf.conj(lfMod(m.mod, term, vars)))];
    case 'or':
      return [lf.or(lf.conj(lfMod(m.left, term, vars)), lf.conj(lfMod(m.right, term, vars)))];
    case 'rel': {
      const atom = (other: Node): Node =>
        m.side === 'subject' ? lf.rel(m.rel, term, other) : lf.rel(m.rel, other, term);
      if (m.target.kind === 'const') return [atom(lf.const(constantOf(m.target.name)))];
      const v = vars.next();
      const inner = lfDesc(m.target.desc, lf.var(v), vars);
      return [lf.exists(v, lf.conj([inner[0], atom(lf.var(v)), ...inner.slice(1)]))];
    }
  }
}

// ---- SQL -----------------------------------------------------------------------------------

/**
 * The conditions saying that a row of the desc's table is in the set (none when unrestricted).
 * `qualify`: write the table name before columns of this level (needed when the query joins).
 */
export function sqlDesc(desc: Desc, qualify: boolean): Node[] {
  const out: Node[] = [];
  if (desc.sub) out.push(subCond(desc.sub, desc.cls, qualify));
  for (const m of desc.mods) out.push(sqlMod(m, desc.cls, qualify));
  return out;
}

function colOf(cls: EntityClass, column: string, qualify: boolean): Node {
  return sql.col(column, qualify ? CLASSES[cls].table : null);
}

function subCond(sub: string, cls: EntityClass, qualify: boolean): Node {
  const s = subclass(sub);
  if (s.of !== cls) throw new Error(`semantics: ${sub} is not a subclass of ${cls}`);
  return sql.compare(sql.ref(colOf(cls, s.column, qualify)), 'eq', sql.str(s.value));
}

export function sqlMod(m: Mod, cls: EntityClass, qualify: boolean): Node {
  switch (m.k) {
    case 'cmp': {
      const me = measure(m.measure);
      return sql.compare(sql.ref(colOf(cls, me.column, qualify)), m.op, sql.num(m.value));
    }
    case 'between': {
      const me = measure(m.measure);
      return sql.between(sql.ref(colOf(cls, me.column, qualify)), sql.num(m.lo), sql.num(m.hi));
    }
    case 'isa':
      return subCond(m.sub, cls, qualify);
    case 'not':
      return sql.not(sqlMod(m.mod, cls, qualify));
    case 'or':
      return sql.or(sqlMod(m.left, cls, qualify), sqlMod(m.right, cls, qualify));
    case 'rel':
      return relCond(m, cls, qualify);
  }
}

/** x (a row of `cls`) is related by `m.rel` to some member of the target set. */
function relCond(m: Extract<Mod, { k: 'rel' }>, cls: EntityClass, qualify: boolean): Node {
  const r = relation(m.rel);
  const other = otherSide(m.rel, m.side);
  if (r.link.kind === 'attribute') {
    if (m.target.kind !== 'const') throw new Error(`semantics: ${m.rel} needs a constant`);
    return sql.compare(sql.ref(colOf(cls, r.link.column, qualify)), 'eq', sql.str(m.target.name));
  }
  if (other === 'village') throw new Error('semantics: village side of a non-attribute relation');
  const otherTable = CLASSES[other].table;
  const targetCond =
    m.target.kind === 'const'
      ? sql.compare(sql.ref(sql.col('name')), 'eq', sql.str(m.target.name))
      : sql.conj(sqlDesc(m.target.desc, false));
  if (r.link.kind === 'fk') {
    if (r.link.child === m.side) {
      // x holds the foreign key: x.fk IN (SELECT id FROM other WHERE …)
      return sql.member(colOf(cls, r.link.fk, qualify), sql.subselect(sql.col('id'), otherTable, targetCond));
    }
    // the other side holds it: x.id IN (SELECT fk FROM other WHERE …)
    return sql.member(colOf(cls, 'id', qualify), sql.subselect(sql.col(r.link.fk), otherTable, targetCond));
  }
  const mine = m.side === 'subject' ? r.link.subjectFk : r.link.objectFk;
  const theirs = m.side === 'subject' ? r.link.objectFk : r.link.subjectFk;
  const through = CLASSES[r.link.through].table;
  return sql.member(
    colOf(cls, 'id', qualify),
    sql.subselect(
      sql.col(mine),
      through,
      sql.member(sql.col(theirs), sql.subselect(sql.col('id'), otherTable, targetCond)),
    ),
  );
}

// ---- structure -----------------------------------------------------------------------------

/** Nesting depth: 1 for a set restricted by constants and numbers, +1 per described inner set. */
export function descDepth(desc: Desc): number {
  return 1 + Math.max(0, ...desc.mods.map(modDepth));
}

function modDepth(m: Mod): number {
  switch (m.k) {
    case 'rel':
      return m.target.kind === 'set' ? descDepth(m.target.desc) : 0;
    case 'not':
      return modDepth(m.mod);
    case 'or':
      return Math.max(modDepth(m.left), modDepth(m.right));
    default:
      return 0;
  }
}

/** Feature tags of a description, recursively: cmp, between, rel, set, village, isa, not, or, sub. */
export function descTags(desc: Desc, into: Set<string> = new Set()): Set<string> {
  if (desc.sub) into.add('sub');
  for (const m of desc.mods) modTags(m, into);
  return into;
}

function modTags(m: Mod, into: Set<string>): void {
  switch (m.k) {
    case 'cmp':
    case 'between':
    case 'isa':
      into.add(m.k);
      return;
    case 'not':
      into.add('not');
      modTags(m.mod, into);
      return;
    case 'or':
      into.add('or');
      modTags(m.left, into);
      modTags(m.right, into);
      return;
    case 'rel':
      if (m.rel === 'lives_in') into.add('village');
      else if (m.target.kind === 'const') into.add('rel');
      else {
        into.add('set');
        descTags(m.target.desc, into);
      }
      return;
  }
}
