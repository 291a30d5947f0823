/**
 * The meaning of every logical-form name of the demo scenario, written down as data: which SQL
 * table, column or join path each class, relation and measure of `grammars/lf/lf.twg` stands for
 * on the demo database `grammars/sql/coop.sql`. The generator builds both gold programs from these
 * tables, and an LF executor can check its semantics against the same tables.
 *
 * Entity constants are the snake_case of the `name` column (`'Hilltop Rows'` → `hilltop_rows`) of
 * growers, orchards, varieties and sheds, plus the villages of `growers.village`. Lots have no
 * names: they are only reached through variables.
 */

/** The entity classes that have a table. */
export type EntityClass = 'grower' | 'orchard' | 'variety' | 'shed' | 'lot';

export interface ClassInfo {
  readonly name: EntityClass;
  readonly table: string;
  /** false for lots (no `name` column): no constants, never the answer of a which-question */
  readonly named: boolean;
}

export const CLASSES: Readonly<Record<EntityClass, ClassInfo>> = {
  grower: { name: 'grower', table: 'growers', named: true },
  orchard: { name: 'orchard', table: 'orchards', named: true },
  variety: { name: 'variety', table: 'varieties', named: true },
  shed: { name: 'shed', table: 'sheds', named: true },
  lot: { name: 'lot', table: 'lots', named: false },
};

/**
 * Subclasses: a unary LF predicate that holds of the entities of `of` whose `column` equals
 * `value`. `apple(x)` ⟺ `x` is a variety with `fruit = 'apple'`; `grade_a(x)` ⟺ `x` is a lot
 * with `grade = 'A'`. A subclass implies its class.
 */
export interface SubclassInfo {
  readonly name: string;
  readonly of: EntityClass;
  readonly column: string;
  readonly value: string;
}

export const SUBCLASSES: readonly SubclassInfo[] = [
  { name: 'apple', of: 'variety', column: 'fruit', value: 'apple' },
  { name: 'pear', of: 'variety', column: 'fruit', value: 'pear' },
  { name: 'cherry', of: 'variety', column: 'fruit', value: 'cherry' },
  { name: 'plum', of: 'variety', column: 'fruit', value: 'plum' },
  { name: 'grade_a', of: 'lot', column: 'grade', value: 'A' },
  { name: 'grade_b', of: 'lot', column: 'grade', value: 'B' },
  { name: 'grade_c', of: 'lot', column: 'grade', value: 'C' },
];

/** A numeric function of one entity: `measure(x)` is column `column` of x's row. */
export interface MeasureInfo {
  readonly name: string;
  readonly of: EntityClass;
  readonly column: string;
  /** whether summing it over a set makes sense (total area, tonnage, capacity) */
  readonly summable: boolean;
}

export const MEASURES: readonly MeasureInfo[] = [
  { name: 'joined', of: 'grower', column: 'joined_year', summable: false },
  { name: 'hectares', of: 'orchard', column: 'hectares', summable: true },
  { name: 'altitude', of: 'orchard', column: 'altitude_m', summable: false },
  { name: 'planted', of: 'orchard', column: 'planted_year', summable: false },
  { name: 'harvest_month', of: 'variety', column: 'harvest_month', summable: false },
  { name: 'capacity', of: 'shed', column: 'capacity_tonnes', summable: true },
  { name: 'temperature', of: 'shed', column: 'temperature_c', summable: false },
  { name: 'tonnes', of: 'lot', column: 'tonnes', summable: true },
  { name: 'year', of: 'lot', column: 'year', summable: false },
];

/**
 * How a binary relation `rel(subject, object)` is stored.
 * - `fk`: the subject's (or object's) table has a foreign key to the other: `child.fk = parent.id`.
 * - `via`: both sides are referenced from one row of a linking table:
 *   `rel(s, o)` ⟺ some row r of `through` has `r.subjectFk = s.id` and `r.objectFk = o.id`.
 * - `attribute`: the object is a value of a text column of the subject's table (villages).
 */
export type RelationLink =
  | { readonly kind: 'fk'; readonly child: 'subject' | 'object'; readonly fk: string }
  | { readonly kind: 'via'; readonly through: EntityClass; readonly subjectFk: string; readonly objectFk: string }
  | { readonly kind: 'attribute'; readonly column: string };

export interface RelationInfo {
  readonly name: string;
  readonly subject: EntityClass;
  /** an entity class, or 'village' for the attribute relation */
  readonly object: EntityClass | 'village';
  readonly link: RelationLink;
}

export const RELATIONS: readonly RelationInfo[] = [
  // owns(g, o) ⟺ o.grower_id = g.id
  { name: 'owns', subject: 'grower', object: 'orchard', link: { kind: 'fk', child: 'object', fk: 'grower_id' } },
  // lives_in(g, v) ⟺ g.village = v
  { name: 'lives_in', subject: 'grower', object: 'village', link: { kind: 'attribute', column: 'village' } },
  // harvested_from(l, o) ⟺ l.orchard_id = o.id
  { name: 'harvested_from', subject: 'lot', object: 'orchard', link: { kind: 'fk', child: 'subject', fk: 'orchard_id' } },
  // variety_of(l, v) ⟺ l.variety_id = v.id
  { name: 'variety_of', subject: 'lot', object: 'variety', link: { kind: 'fk', child: 'subject', fk: 'variety_id' } },
  // stored_in(l, s) ⟺ l.shed_id = s.id
  { name: 'stored_in', subject: 'lot', object: 'shed', link: { kind: 'fk', child: 'subject', fk: 'shed_id' } },
  // grows(o, v) ⟺ ∃ lot l: l.orchard_id = o.id ∧ l.variety_id = v.id
  {
    name: 'grows',
    subject: 'orchard',
    object: 'variety',
    link: { kind: 'via', through: 'lot', subjectFk: 'orchard_id', objectFk: 'variety_id' },
  },
];

export function relation(name: string): RelationInfo {
  const r = RELATIONS.find((x) => x.name === name);
  if (!r) throw new Error(`lexicon: unknown relation '${name}'`);
  return r;
}

export function measure(name: string): MeasureInfo {
  const m = MEASURES.find((x) => x.name === name);
  if (!m) throw new Error(`lexicon: unknown measure '${name}'`);
  return m;
}

export function subclass(name: string): SubclassInfo {
  const s = SUBCLASSES.find((x) => x.name === name);
  if (!s) throw new Error(`lexicon: unknown subclass '${name}'`);
  return s;
}

/** 'Hilltop Rows' → 'hilltop_rows' (the LF constant of a named row). */
export function constantOf(name: string): string {
  return name
    .trim()
    .toLowerCase()
    .replace(/[^a-z0-9]+/g, '_')
    .replace(/^_+|_+$/g, '');
}

/**
 * Answer conventions shared by both targets (what an executor must return to agree):
 * - `lambda` ↔ `SELECT name FROM …`: the set of names (LF constants ↔ `name` values).
 * - `argmax`/`argmin` ↔ `… ORDER BY col DESC|(asc) LIMIT 1`: one name (the generator only keeps
 *   questions whose extreme is unique).
 * - `value: count …` ↔ `SELECT COUNT(*) …`; `value: sum … of m` ↔ `SELECT SUM(col) …` (only
 *   generated over non-empty sets); `value: m(c)` ↔ `SELECT col FROM t WHERE name = 'C'`.
 * - `holds: φ` ↔ `SELECT COUNT(*) FROM t WHERE …`: yes exactly when the count is greater than 0.
 */
