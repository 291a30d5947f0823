/**
 * The demo cooperative, one source of truth for both executors: `buildCoop` runs
 * grammars/sql/coop.sql into a SQLite file and reads the same rows back into the logical-form
 * fact base, through the demo scenario's lexicon (lexicon.ts, shared with the training-data generator) — so the SQL executor and the
 * LF executor answer over identical facts.
 *
 * Fact base (from the lexicon's tables):
 * - entities: the constant of every named row (`'Hilltop Rows'` → `hilltop_rows`) of growers,
 *   orchards, varieties and sheds; every village of `growers.village`; and one anonymous entity
 *   per lot (`lot#17`: in the domain, so quantifiers reach it, but not a constant of the language);
 * - classes: grower, orchard, variety, shed, lot, and the subclasses (apple, grade_a, …);
 * - relations: foreign-key, linking-table and attribute relations (owns, lives_in, grows, …);
 * - measures: the numeric columns (hectares, tonnes, …), defined on their class only;
 * - kinds: a row's entity has its table's class (grower, …, lot), a village the kind village.
 * Cost: one pass over each table; the demo has under 300 rows.
 */
import { sqlite } from '../util/optional.ts';
import { CLASSES, MEASURES, RELATIONS, SUBCLASSES, type EntityClass, constantOf } from './lexicon.ts';
import { buildSqliteFileFrom } from './database.ts';
import { makeFactBase, type FactBase } from './facts.ts';
import type { LfAnswer } from './lf.ts';

type Row = Record<string, unknown> & { id: number };

/** Reads an existing cooperative database (opened read-only) into a fact base. */
export function factsFromDatabase(dbPath: string): FactBase {
  const db = new (sqlite())(dbPath, { readonly: true, fileMustExist: true });
  try {
    const rows = new Map<EntityClass, Row[]>();
    const nameOf = new Map<EntityClass, Map<number, string>>();
    const owner = new Map<string, string>(); // constant → where it came from (collision check)
    const entities: string[] = [];
    const anonymous: string[] = [];
    const classes: Record<string, string[]> = {};
    const kinds: Record<string, string> = {};
    const claim = (name: string, where: string) => {
      const prev = owner.get(name);
      if (prev !== undefined && prev !== where) {
        throw new Error(`${dbPath}: the constant ${name} would denote both ${prev} and ${where}`);
      }
      if (prev === undefined) {
        owner.set(name, where);
        entities.push(name);
      }
    };
    for (const info of Object.values(CLASSES)) {
      const rs = db.prepare(`SELECT * FROM ${info.table} ORDER BY id`).all() as Row[];
      rows.set(info.name, rs);
      const names = new Map<number, string>();
      for (const r of rs) {
        let e: string;
        if (info.named) {
          e = constantOf(String(r.name));
          claim(e, `${info.table} row ${r.id}`);
        } else {
          e = `${info.name}#${r.id}`;
          claim(e, `${info.table} row ${r.id}`);
          anonymous.push(e);
        }
        names.set(r.id, e);
        kinds[e] = info.name;
      }
      nameOf.set(info.name, names);
      classes[info.name] = [...names.values()];
    }
    const entityOf = (cls: EntityClass, id: unknown): string => {
      const e = nameOf.get(cls)!.get(Number(id));
      if (e === undefined) throw new Error(`${dbPath}: no ${CLASSES[cls].table} row with id ${String(id)}`);
      return e;
    };
    for (const s of SUBCLASSES) {
      classes[s.name] = rows.get(s.of)!.filter((r) => r[s.column] === s.value).map((r) => entityOf(s.of, r.id));
    }
    const relations: Record<string, [string, string][]> = {};
    for (const r of RELATIONS) {
      const pairs: [string, string][] = [];
      const link = r.link;
      if (link.kind === 'attribute') {
        for (const row of rows.get(r.subject)!) {
          const v = constantOf(String(row[link.column]));
          claim(v, `the ${link.column} value ${String(row[link.column])}`);
          kinds[v] = r.object;
          pairs.push([entityOf(r.subject, row.id), v]);
        }
      } else if (link.kind === 'fk') {
        if (r.object === 'village') throw new Error(`lexicon: relation ${r.name} has a village object but a foreign-key link`);
        const objectCls = r.object;
        if (link.child === 'object') {
          for (const row of rows.get(objectCls)!) pairs.push([entityOf(r.subject, row[link.fk]), entityOf(objectCls, row.id)]);
        } else {
          for (const row of rows.get(r.subject)!) pairs.push([entityOf(r.subject, row.id), entityOf(objectCls, row[link.fk])]);
        }
      } else {
        if (r.object === 'village') throw new Error(`lexicon: relation ${r.name} has a village object but a linking table`);
        const objectCls = r.object;
        for (const row of rows.get(link.through)!) {
          pairs.push([entityOf(r.subject, row[link.subjectFk]), entityOf(objectCls, row[link.objectFk])]);
        }
      }
      relations[r.name] = pairs;
    }
    const measures: Record<string, [string, number][]> = {};
    for (const m of MEASURES) {
      measures[m.name] = rows.get(m.of)!.map((row) => [entityOf(m.of, row.id), Number(row[m.column])]);
    }
    return makeFactBase({ entities, anonymous, classes, relations, measures, kinds });
  } finally {
    db.close();
  }
}

/** Builds the SQLite file from the SQL script and the fact base from the same rows. */
export function buildCoop(sqlFile: string, dbPath: string): { dbPath: string; facts: FactBase } {
  buildSqliteFileFrom(sqlFile, dbPath);
  return { dbPath, facts: factsFromDatabase(dbPath) };
}

/**
 * Whether an LF answer and a SQL result say the same thing, by the dataset's answer conventions
 * (lexicon.ts, end): a set ↔ one `name` column (names mapped to constants, compared as sets); an
 * argmax/argmin ↔ exactly one row whose name is the single best entity; a number ↔ one numeric
 * cell (relative tolerance 1e-9, absolute below 1); a truth value ↔ one count cell, yes ⟺ count > 0.
 * Returns null when they agree, else why not.
 */
export function lfAgreesWithSql(lf: LfAnswer, sql: { readonly columns: readonly string[]; readonly rows: readonly (readonly unknown[])[] }): string | null {
  const cell = (): unknown => (sql.rows.length === 1 && sql.rows[0].length === 1 ? sql.rows[0][0] : undefined);
  switch (lf.type) {
    case 'set': {
      if (sql.columns.length !== 1) return `a set answer needs one column, SQL gave ${sql.columns.length}`;
      const fromSql = [...new Set(sql.rows.map((r) => constantOf(String(r[0]))))].sort();
      const fromLf = [...new Set(lf.members)].sort();
      return fromSql.length === fromLf.length && fromSql.every((x, i) => x === fromLf[i])
        ? null
        : `LF {${fromLf.join(', ')}} vs SQL {${fromSql.join(', ')}}`;
    }
    case 'best': {
      const c = cell();
      if (c === undefined) return `an argmax/argmin answer needs one row of one column, SQL gave ${sql.rows.length} rows`;
      const name = constantOf(String(c));
      return lf.members.length === 1 && lf.members[0] === name ? null : `LF best {${lf.members.join(', ')}} vs SQL ${name}`;
    }
    case 'number': {
      const c = cell();
      if (typeof c !== 'number') return `a number answer needs one numeric cell, SQL gave ${JSON.stringify(sql.rows).slice(0, 80)}`;
      return Math.abs(c - lf.value) <= 1e-9 * Math.max(1, Math.abs(c)) ? null : `LF ${lf.value} vs SQL ${c}`;
    }
    case 'truth': {
      const c = cell();
      if (typeof c !== 'number') return `a yes/no answer needs one count cell, SQL gave ${JSON.stringify(sql.rows).slice(0, 80)}`;
      return c > 0 === lf.value ? null : `LF ${lf.value ? 'yes' : 'no'} vs SQL count ${c}`;
    }
  }
}
