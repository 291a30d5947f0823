/**
 * The question generator: synchronous templates that produce, for one random choice of
 * construction, entities and numbers, an English question (several phrasings), a logical-form
 * tree and an SQL tree that mean the same thing on the demo database.
 */
import type Database from 'better-sqlite3';
import { mulberry32 } from '../util/random.ts';
import { CLASSES, type EntityClass, MEASURES, type MeasureInfo, SUBCLASSES, constantOf } from '../exec/lexicon.ts';
import {
  CMP,
  MONTHS,
  type Pick,
  REL,
  agree,
  fill,
  modText,
  noun,
  np,
  numberText,
  post,
  ynText,
} from './phrases.ts';
import { type Desc, type Mod, type Target, VarSupply, descDepth, descTags, lfDesc, lfMod, sqlDesc, sqlMod } from './semantics.ts';
import { type CmpName, lf, type Node, sql } from './trees.ts';

// ---- random numbers ------------------------------------------------------------------------

/** Seeded choices over the tree stage's mulberry32 stream (same seed → same dataset). */
export class Rng {
  readonly float: () => number;
  constructor(seed: number) {
    this.float = mulberry32(seed);
  }
  int(n: number): number {
    return Math.floor(this.float() * n);
  }
  pick: Pick = <T>(xs: readonly T[]): T => {
    if (xs.length === 0) throw new Error('Rng.pick: empty list');
    return xs[this.int(xs.length)];
  };
  chance(p: number): boolean {
    return this.float() < p;
  }
  shuffle<T>(xs: T[]): T[] {
    for (let i = xs.length - 1; i > 0; i--) {
      const j = this.int(i + 1);
      [xs[i], xs[j]] = [xs[j], xs[i]];
    }
    return xs;
  }
}

// ---- the world -----------------------------------------------------------------------------

export interface World {
  readonly db: Database.Database;
  /** names of the rows of each named class */
  readonly names: Readonly<Record<'grower' | 'orchard' | 'variety' | 'shed', readonly string[]>>;
  readonly villages: readonly string[];
}

export function loadWorld(db: Database.Database): World {
  const col = (q: string) => (db.prepare(q).pluck().all() as string[]);
  return {
    db,
    names: {
      grower: col('SELECT name FROM growers ORDER BY id'),
      orchard: col('SELECT name FROM orchards ORDER BY id'),
      variety: col('SELECT name FROM varieties ORDER BY id'),
      shed: col('SELECT name FROM sheds ORDER BY id'),
    },
    villages: col('SELECT DISTINCT village FROM growers ORDER BY village'),
  };
}

/** Thresholds offered for each measure (chosen to split the demo data in interesting places). */
const THRESHOLDS: Readonly<Record<string, readonly number[]>> = {
  joined: [1996, 1998, 2000, 2002, 2004, 2005, 2008, 2010, 2012, 2015],
  hectares: [2, 3, 4, 5, 6, 7, 8, 9, 10, 2.5, 4.5, 7.5],
  altitude: [100, 150, 200, 250, 300, 350, 400, 450, 500],
  planted: [1985, 1988, 1990, 1992, 1995, 2000, 2004, 2005, 2010, 2012],
  harvest_month: [6, 7, 8, 9, 10],
  capacity: [200, 250, 300, 350],
  temperature: [1, 2, 3, 1.5, 2.5],
  tonnes: [5, 10, 15, 20, 25, 30, 40, 50],
  year: [2019, 2020, 2021, 2022, 2023, 2024, 2025],
};

// ---- random descriptions -------------------------------------------------------------------

type Style = 'plain' | 'not' | 'or';
type Named = 'grower' | 'orchard' | 'variety' | 'shed';

const NAMED: readonly Named[] = ['grower', 'orchard', 'variety', 'shed'];

/** Relation slots available to x of each class: [rel, side x takes]. */
const REL_SLOTS: Readonly<Record<EntityClass, readonly (readonly [string, 'subject' | 'object'])[]>> = {
  grower: [['owns', 'subject'], ['lives_in', 'subject']],
  orchard: [['owns', 'object'], ['grows', 'subject'], ['harvested_from', 'object']],
  variety: [['grows', 'object'], ['variety_of', 'object']],
  shed: [['stored_in', 'object']],
  lot: [['harvested_from', 'subject'], ['variety_of', 'subject'], ['stored_in', 'subject']],
};

function measuresOf(cls: EntityClass): MeasureInfo[] {
  return MEASURES.filter((m) => m.of === cls);
}

function otherClass(rel: string, side: 'subject' | 'object'): EntityClass | 'village' {
  const r = { owns: ['grower', 'orchard'], lives_in: ['grower', 'village'], harvested_from: ['lot', 'orchard'],
    variety_of: ['lot', 'variety'], stored_in: ['lot', 'shed'], grows: ['orchard', 'variety'] }[rel];
  if (!r) throw new Error(`generate: unknown relation ${rel}`);
  return (side === 'subject' ? r[1] : r[0]) as EntityClass | 'village';
}

export class Sampler {
  constructor(
    readonly world: World,
    readonly rng: Rng,
  ) {}

  cmpMod(cls: EntityClass): Mod | null {
    const ms = measuresOf(cls);
    if (ms.length === 0) return null;
    const m = this.rng.pick(ms);
    const ops = Object.keys(CMP[m.name].post) as CmpName[];
    if (CMP[m.name].between && this.rng.chance(0.15)) {
      const vs = THRESHOLDS[m.name];
      let lo = this.rng.pick(vs);
      let hi = this.rng.pick(vs);
      if (lo === hi) return null;
      if (lo > hi) [lo, hi] = [hi, lo];
      return { k: 'between', measure: m.name, lo, hi };
    }
    return { k: 'cmp', measure: m.name, op: this.rng.pick(ops), value: this.rng.pick(THRESHOLDS[m.name]) };
  }

  constTarget(other: EntityClass | 'village'): Target | null {
    if (other === 'village') return { kind: 'const', name: this.rng.pick(this.world.villages) };
    if (other === 'lot') return null;
    return { kind: 'const', name: this.rng.pick(this.world.names[other]) };
  }

  /** A restriction on x of `cls`; `setDepth` > 0 forces a described target of that depth. */
  relMod(cls: EntityClass, setDepth: number): Mod | null {
    const slots = REL_SLOTS[cls].filter(([rel, side]) => {
      const other = otherClass(rel, side);
      if (setDepth > 0) return other !== 'village';
      return other !== 'lot';
    });
    if (slots.length === 0) return null;
    const [rel, side] = this.rng.pick(slots);
    const other = otherClass(rel, side);
    if (setDepth > 0) {
      if (other === 'village') return null;
      return { k: 'rel', rel, side, target: { kind: 'set', desc: this.innerDesc(other, setDepth) } };
    }
    const target = this.constTarget(other);
    return target ? { k: 'rel', rel, side, target } : null;
  }

  /** A described inner set of exactly `depth`, with one restriction (or only a subclass). */
  innerDesc(cls: EntityClass, depth: number): Desc {
    for (let tries = 0; ; tries++) {
      if (tries > 1000) throw new Error(`generate: cannot describe a ${cls} set of depth ${depth}`);
      if (depth === 1 && cls === 'variety' && this.rng.chance(0.3)) {
        return { cls, sub: this.rng.pick(SUBCLASSES.filter((s) => s.of === 'variety')).name, mods: [] };
      }
      const sub = cls === 'lot' && this.rng.chance(0.15) ? this.rng.pick(SUBCLASSES.filter((s) => s.of === 'lot')).name : null;
      const m = depth > 1 ? this.relMod(cls, depth - 1) : this.rng.chance(0.5) ? this.cmpMod(cls) : this.relMod(cls, 0);
      if (m) return { cls, sub, mods: [m] };
    }
  }

  /**
   * A top-level description of `cls` with depth exactly `depth` (1..3) in `style`:
   * 'not' makes one restriction a negation, 'or' one a disjunction of two.
   */
  desc(cls: EntityClass, depth: number, style: Style, minMods = 1): Desc | null {
    for (let tries = 0; tries < 50; tries++) {
      const mods: Mod[] = [];
      let sub: string | null = null;
      const subs = SUBCLASSES.filter((s) => s.of === cls);
      if (subs.length > 0 && style !== 'not' && this.rng.chance(0.25)) sub = this.rng.pick(subs).name;
      const nFlat = this.rng.chance(0.45) ? 2 : 1;
      const flat: Mod[] = [];
      for (let i = 0; i < nFlat + 2 && flat.length < nFlat; i++) {
        const m = this.rng.chance(0.5) ? this.cmpMod(cls) : this.relMod(cls, 0);
        if (m && !flat.some((f) => sameSlot(f, m))) flat.push(m);
      }
      if (style === 'not') {
        const negatable: Mod[] = [];
        const r = this.relMod(cls, 0);
        if (r) negatable.push(r);
        const subsOf = SUBCLASSES.filter((s) => s.of === cls);
        if (subsOf.length > 0 && this.rng.chance(0.3)) negatable.push({ k: 'isa', sub: this.rng.pick(subsOf).name });
        if (negatable.length === 0) continue;
        mods.push({ k: 'not', mod: this.rng.pick(negatable) });
        if (flat.length > 0 && this.rng.chance(0.5)) mods.unshift(flat[0]);
      } else if (style === 'or') {
        if (flat.length < 2) continue;
        mods.push({ k: 'or', left: flat[0], right: flat[1] });
      } else {
        mods.push(...flat.slice(0, depth > 1 ? 1 : flat.length));
      }
      if (depth > 1) {
        const m = this.relMod(cls, depth - 1);
        if (!m) continue;
        if (this.rng.chance(0.4) && style === 'plain') mods.length = 0;
        mods.push(m); // a nested set goes last, so its own restrictions end the phrase
      }
      if (mods.length + (sub ? 1 : 0) < minMods) continue;
      if (mods.some((m, i) => mods.some((o, j) => j !== i && sameSlot(m, o)))) continue;
      const d: Desc = { cls, sub, mods };
      if (descDepth(d) !== depth) continue;
      return d;
    }
    return null;
  }
}

/** Two restrictions on the same measure or relation read badly ("above 300 m and above 400 m"). */
function sameSlot(a: Mod, b: Mod): boolean {
  const key = (m: Mod): string =>
    m.k === 'cmp' || m.k === 'between' ? `m:${m.measure}` : m.k === 'rel' ? `r:${m.rel}:${m.side}` : m.k === 'not' ? key(m.mod) : m.k;
  return key(a) === key(b);
}

// ---- examples ------------------------------------------------------------------------------

export type Form =
  | 'which'
  | 'count'
  | 'superlative'
  | 'total'
  | 'measure_of'
  | 'yn_const'
  | 'yn_exists'
  | 'compare2'
  | 'group';

export interface Example {
  readonly question: string;
  readonly lf: Node;
  readonly sql: Node;
  readonly form: Form;
  /** feature tags (see semantics.descTags) */
  readonly tags: readonly string[];
  readonly cls: string;
  readonly depth: number;
  /** for superlatives, over which rows the extreme must be unique: SQL returning (name, value) */
  readonly check?: Node;
}

export function templateName(e: Pick2<Example, 'form' | 'cls' | 'tags'>): string {
  return `${e.form}:${e.cls}:${e.tags.length ? [...e.tags].sort().join('+') : 'none'}`;
}

type Pick2<T, K extends keyof T> = { [P in K]: T[P] };

const cap = (s: string): string => s.charAt(0).toUpperCase() + s.slice(1);

const WHICH_FRAMES = [
  'Which {np}?', 'Which {np} are there?', 'List the {np}.', 'List all {np}.', 'Show the {np}.',
  'What are the {np}?', 'Name the {np}.', 'Give me the {np}.', 'Show me all {np}.',
];
const COUNT_FRAMES = [
  'How many {np} are there?', 'How many {np}?', 'Count the {np}.', 'What is the number of {np}?',
  'How many {np} does the cooperative have?', 'Give the number of {np}.',
];
const EXISTS_FRAMES = ['Are there {np}?', 'Are there any {np}?', 'Is there any {sg}?', 'Do any {np} exist?'];

const SUPER_ADJ: Readonly<Record<string, { max: readonly string[]; min: readonly string[] }>> = {
  hectares: { max: ['largest', 'biggest'], min: ['smallest'] },
  altitude: { max: ['highest', 'highest-lying'], min: ['lowest', 'lowest-lying'] },
  planted: { max: ['youngest', 'newest'], min: ['oldest'] },
  capacity: { max: ['largest', 'biggest'], min: ['smallest'] },
  temperature: { max: ['warmest'], min: ['coldest'] },
  joined: { max: ['newest', 'most recent'], min: ['longest-standing', 'earliest'] },
  harvest_month: { max: ['latest', 'latest-ripening'], min: ['earliest', 'earliest-ripening'] },
};
const SUPER_FRAMES = [
  'Which is the {adj} {sg}?', 'What is the {adj} {sg}?', 'Name the {adj} {sg}.', 'Find the {adj} {sg}.',
  'Which {sg} is the {adj}?',
];

const COMPARATIVE: Readonly<Record<string, { max: readonly string[]; min: readonly string[] }>> = {
  hectares: { max: ['Which is larger, {a} or {b}?', 'Which of {a} and {b} is bigger?', 'Which {sg} is larger: {a} or {b}?'],
    min: ['Which is smaller, {a} or {b}?', 'Which of {a} and {b} is smaller?'] },
  altitude: { max: ['Which is higher, {a} or {b}?', 'Which of {a} and {b} lies higher?', 'Which {sg} is higher: {a} or {b}?'],
    min: ['Which is lower, {a} or {b}?', 'Which of {a} and {b} lies lower?'] },
  planted: { max: ['Which is younger, {a} or {b}?', 'Which was planted later, {a} or {b}?'],
    min: ['Which is older, {a} or {b}?', 'Which was planted first, {a} or {b}?', 'Which {sg} is older: {a} or {b}?'] },
  capacity: { max: ['Which holds more, {a} or {b}?', 'Which of {a} and {b} has the larger capacity?'],
    min: ['Which holds less, {a} or {b}?', 'Which of {a} and {b} has the smaller capacity?'] },
  temperature: { max: ['Which is warmer, {a} or {b}?', 'Which of {a} and {b} is kept warmer?'],
    min: ['Which is colder, {a} or {b}?', 'Which of {a} and {b} is kept colder?'] },
  joined: { max: ['Who joined later, {a} or {b}?', 'Which of {a} and {b} joined more recently?'],
    min: ['Who joined earlier, {a} or {b}?', 'Who joined first, {a} or {b}?', 'Which of {a} and {b} has been a member longer?'] },
  harvest_month: { max: ['Which is harvested later, {a} or {b}?', 'Which ripens later, {a} or {b}?'],
    min: ['Which is harvested earlier, {a} or {b}?', 'Which ripens first, {a} or {b}?'] },
};

const MEASURE_OF: Readonly<Record<string, readonly string[]>> = {
  hectares: ['How large is {s}?', 'How many hectares does {s} cover?', 'What is the size of {s} in hectares?', 'What area does {s} have?'],
  altitude: ['How high is {s}?', 'At what altitude is {s}?', 'What is the altitude of {s}?', 'How many metres up is {s}?'],
  planted: ['When was {s} planted?', 'In which year was {s} planted?', 'What year was {s} established?'],
  joined: ['When did {s} join?', 'In which year did {s} join the cooperative?', 'What year did {s} become a member?'],
  harvest_month: ['In which month is {s} harvested?', 'When is {s} picked?', 'What is the harvest month of {s}?'],
  capacity: ['What is the capacity of {s}?', 'How many tonnes can {s} hold?', 'How much does {s} hold?'],
  temperature: ['What temperature is {s} kept at?', 'How cold is {s}?', 'What is the temperature of {s}?'],
};

const TOTAL_FRAMES: Readonly<Record<string, readonly string[]>> = {
  hectares: ['What is the total area of {np}?', 'How many hectares do {np} cover in total?', 'What is the combined size of {np} in hectares?'],
  capacity: ['What is the total capacity of {np}?', 'How many tonnes can {np} hold together?', 'What is the combined capacity of {np}?'],
  tonnes: ['What is the total weight of {np}?', 'How many tonnes do {np} weigh in total?', 'What is the total tonnage of {np}?', 'How many tonnes are in {np}?'],
};

/** Aggregations of child rows per entity (the group-by questions). */
interface GroupSpec {
  readonly outer: Named;
  readonly child: 'orchard' | 'lot';
  readonly agg: 'count' | 'sum';
  /** the summed measure of the child (sum only) */
  readonly measure?: string;
  readonly frames: readonly string[];
  readonly thresholds: readonly number[];
}

const GROUPS: readonly GroupSpec[] = [
  { outer: 'grower', child: 'orchard', agg: 'count', thresholds: [1, 2],
    frames: ['Which {o} own {op} {k} {c}?', 'Which {o} have {op} {k} {c}?', 'List the {o} with {op} {k} {c}.'] },
  { outer: 'grower', child: 'orchard', agg: 'sum', measure: 'hectares', thresholds: [5, 10, 15, 20],
    frames: ['Which {o} own {op} {k} hectares in total?', 'Which {o} farm {op} {k} hectares altogether?', 'List the {o} whose orchards cover {op} {k} hectares.'] },
  { outer: 'grower', child: 'lot', agg: 'count', thresholds: [5, 10, 15, 20, 25],
    frames: ['Which {o} delivered {op} {k} {c}?', 'Which {o} have {op} {k} {c} from their orchards?'] },
  { outer: 'grower', child: 'lot', agg: 'sum', measure: 'tonnes', thresholds: [100, 200, 300, 400, 500, 600],
    frames: ['Which {o} harvested {op} {k} tonnes{cp} in total?', 'Which {o} delivered {op} {k} tonnes{cp} altogether?'] },
  { outer: 'orchard', child: 'lot', agg: 'count', thresholds: [3, 5, 8, 10, 12],
    frames: ['Which {o} produced {op} {k} {c}?', 'Which {o} have {op} {k} {c}?', 'List the {o} with {op} {k} {c}.'] },
  { outer: 'orchard', child: 'lot', agg: 'sum', measure: 'tonnes', thresholds: [50, 100, 150, 200, 250, 300],
    frames: ['Which {o} produced {op} {k} tonnes{cp} in total?', 'Which {o} yielded {op} {k} tonnes{cp}?'] },
  { outer: 'variety', child: 'lot', agg: 'count', thresholds: [5, 10, 15, 20],
    frames: ['Which {o} have {op} {k} {c}?', 'Which {o} appear in {op} {k} {c}?'] },
  { outer: 'variety', child: 'lot', agg: 'sum', measure: 'tonnes', thresholds: [100, 200, 300, 400],
    frames: ['Which {o} yielded {op} {k} tonnes{cp} in total?', 'Of which {o} were {op} {k} tonnes{cp} harvested?'] },
  { outer: 'shed', child: 'lot', agg: 'count', thresholds: [5, 10, 15, 20, 25, 30],
    frames: ['Which {o} hold {op} {k} {c}?', 'Which {o} store {op} {k} {c}?'] },
  { outer: 'shed', child: 'lot', agg: 'sum', measure: 'tonnes', thresholds: [100, 200, 300, 400, 500, 600, 700],
    frames: ['Which {o} hold {op} {k} tonnes{cp} in total?', 'Which {o} store {op} {k} tonnes{cp} altogether?'] },
];

const OP_TEXT: Readonly<Record<'gt' | 'ge', string>> = { gt: 'more than', ge: 'at least' };

export class Generator {
  readonly s: Sampler;
  constructor(readonly world: World, readonly rng: Rng) {
    this.s = new Sampler(world, rng);
  }

  private table(cls: EntityClass): string {
    return CLASSES[cls].table;
  }

  /** Which-questions over a named class. */
  which(depth: number, style: Style): Example | null {
    const cls = this.rng.pick(NAMED);
    const d = this.s.desc(cls, depth, style, 0);
    if (!d) return null;
    const frames = cls === 'grower' ? [...WHICH_FRAMES, 'Who are the {np}?'] : WHICH_FRAMES;
    const q = fill(this.rng.pick(frames), { np: np(d, true, this.rng.pick) });
    const vars = new VarSupply();
    const v = vars.next();
    const lfTree = lf.lambda(v, lf.conj(lfDesc(d, lf.var(v), vars)));
    const sqlTree = sql.select({ items: [sql.column(sql.col('name'))], from: this.table(cls), where: sql.conj(sqlDesc(d, false)) });
    return { question: q, lf: lfTree, sql: sqlTree, form: 'which', tags: [...descTags(d)], cls, depth };
  }

  count(depth: number, style: Style): Example | null {
    const cls = this.rng.pick<EntityClass>([...NAMED, 'lot', 'lot']);
    const d = this.s.desc(cls, depth, style, cls === 'lot' ? 1 : 0);
    if (!d) return null;
    const q = fill(this.rng.pick(COUNT_FRAMES), { np: np(d, true, this.rng.pick) });
    const vars = new VarSupply();
    const v = vars.next();
    const lfTree = lf.value(lf.count(v, lf.conj(lfDesc(d, lf.var(v), vars))));
    const sqlTree = sql.select({ items: [sql.aggregate(sql.countRows())], from: this.table(cls), where: sql.conj(sqlDesc(d, false)) });
    return { question: q, lf: lfTree, sql: sqlTree, form: 'count', tags: [...descTags(d)], cls, depth };
  }

  superlative(depth: number, style: Style): Example | null {
    const cls = this.rng.pick(NAMED);
    const m = this.rng.pick(measuresOf(cls));
    const dir = this.rng.pick(['max', 'min'] as const);
    const d = this.s.desc(cls, depth, style, 0);
    if (!d) return null;
    const adj = this.rng.pick(SUPER_ADJ[m.name][dir]);
    const sg = noun(d, false, this.rng.pick) + post(d, false, this.rng.pick);
    const q = fill(this.rng.pick(SUPER_FRAMES), { adj, sg });
    const vars = new VarSupply();
    const v = vars.next();
    const body = lf.conj(lfDesc(d, lf.var(v), vars));
    const lfTree = dir === 'max' ? lf.argmax(v, body, m.name) : lf.argmin(v, body, m.name);
    const where = sql.conj(sqlDesc(d, false));
    const key = sql.col(m.column);
    const sqlTree = sql.select({
      items: [sql.column(sql.col('name'))], from: this.table(cls), where,
      order: [sql.order(key, dir === 'max' ? 'desc' : null)], limit: 1,
    });
    const check = sql.select({
      items: [sql.column(sql.col('name')), sql.column(sql.col(m.column))], from: this.table(cls), where,
      order: [sql.order(key, dir === 'max' ? 'desc' : null)],
    });
    return { question: q, lf: lfTree, sql: sqlTree, form: 'superlative', tags: [...descTags(d), dir], cls, depth, check };
  }

  total(depth: number): Example | null {
    const m = this.rng.pick(MEASURES.filter((x) => x.summable));
    const cls = m.of;
    const d = this.s.desc(cls, depth, 'plain', 1);
    if (!d) return null;
    const q = fill(this.rng.pick(TOTAL_FRAMES[m.name]), { np: np(d, true, this.rng.pick) });
    const vars = new VarSupply();
    const v = vars.next();
    const lfTree = lf.value(lf.total(v, lf.conj(lfDesc(d, lf.var(v), vars)), m.name));
    const sqlTree = sql.select({
      items: [sql.aggregate(sql.apply('sum', sql.col(m.column)))], from: this.table(cls), where: sql.conj(sqlDesc(d, false)),
    });
    return { question: q, lf: lfTree, sql: sqlTree, form: 'total', tags: [...descTags(d)], cls, depth };
  }

  measureOf(): Example {
    const m = this.rng.pick(MEASURES.filter((x) => x.of !== 'lot'));
    const cls = m.of as Named;
    const name = this.rng.pick(this.world.names[cls]);
    const q = fill(this.rng.pick(MEASURE_OF[m.name]), { s: name });
    const lfTree = lf.value(lf.measure(m.name, lf.const(constantOf(name))));
    const sqlTree = sql.select({
      items: [sql.column(sql.col(m.column))], from: this.table(cls),
      where: sql.compare(sql.ref(sql.col('name')), 'eq', sql.str(name)),
    });
    return { question: q, lf: lfTree, sql: sqlTree, form: 'measure_of', tags: [m.name], cls, depth: 0 };
  }

  /** "Is Hilltop Rows above 400 m?": one restriction applied to a named entity. */
  ynConst(depth: number): Example | null {
    const cls = this.rng.pick(NAMED);
    const name = this.rng.pick(this.world.names[cls]);
    let m: Mod | null;
    if (depth > 1) m = this.s.relMod(cls, depth - 1);
    else if (cls === 'variety' && this.rng.chance(0.2)) m = { k: 'isa', sub: this.rng.pick(SUBCLASSES.filter((s) => s.of === 'variety')).name };
    else m = this.rng.chance(0.5) ? this.s.cmpMod(cls) : this.s.relMod(cls, 0);
    if (!m || m.k === 'between') return null;
    if (m.k === 'cmp' && !CMP[m.measure].yn[m.op]?.length) return null;
    if (m.k === 'rel' && REL[`${m.rel}:${m.side}`].yn.length === 0) return null;
    const q = ynText(m, name, this.rng.pick);
    const c = lf.const(constantOf(name));
    const lfTree = lf.truth(lf.conj(lfMod(m, c, new VarSupply())));
    const sqlTree = sql.select({
      items: [sql.aggregate(sql.countRows())], from: this.table(cls),
      where: sql.and(sql.compare(sql.ref(sql.col('name')), 'eq', sql.str(name)), sqlMod(m, cls, false)),
    });
    const d: Desc = { cls, sub: null, mods: [m] };
    return { question: q, lf: lfTree, sql: sqlTree, form: 'yn_const', tags: [...descTags(d)], cls, depth: descDepth(d) };
  }

  ynExists(depth: number, style: Style): Example | null {
    const cls = this.rng.pick<EntityClass>([...NAMED, 'lot']);
    const d = this.s.desc(cls, depth, style, 1);
    if (!d) return null;
    const q = fill(this.rng.pick(EXISTS_FRAMES), {
      np: np(d, true, this.rng.pick),
      sg: noun(d, false, this.rng.pick) + post(d, false, this.rng.pick),
    });
    const vars = new VarSupply();
    const v = vars.next();
    const lfTree = lf.truth(lf.exists(v, lf.conj(lfDesc(d, lf.var(v), vars))));
    const sqlTree = sql.select({ items: [sql.aggregate(sql.countRows())], from: this.table(cls), where: sql.conj(sqlDesc(d, false)) });
    return { question: q, lf: lfTree, sql: sqlTree, form: 'yn_exists', tags: [...descTags(d)], cls, depth };
  }

  compare2(): Example | null {
    const cls = this.rng.pick(NAMED);
    const m = this.rng.pick(measuresOf(cls));
    const names = this.world.names[cls];
    const a = this.rng.pick(names);
    const b = this.rng.pick(names);
    if (a === b) return null;
    const dir = this.rng.pick(['max', 'min'] as const);
    const q = fill(this.rng.pick(COMPARATIVE[m.name][dir]), { a, b, sg: noun({ cls, sub: null }, false, this.rng.pick) });
    const v = '$x';
    const x = lf.var(v);
    const body = lf.and(lf.is(cls, x), lf.or(lf.equal(x, lf.const(constantOf(a))), lf.equal(x, lf.const(constantOf(b)))));
    const lfTree = dir === 'max' ? lf.argmax(v, body, m.name) : lf.argmin(v, body, m.name);
    const nameIs = (n: string) => sql.compare(sql.ref(sql.col('name')), 'eq', sql.str(n));
    const where = sql.or(nameIs(a), nameIs(b));
    const key = sql.col(m.column);
    const sqlTree = sql.select({
      items: [sql.column(sql.col('name'))], from: this.table(cls), where,
      order: [sql.order(key, dir === 'max' ? 'desc' : null)], limit: 1,
    });
    const check = sql.select({
      items: [sql.column(sql.col('name')), sql.column(sql.col(m.column))], from: this.table(cls), where,
      order: [sql.order(key, dir === 'max' ? 'desc' : null)],
    });
    return { question: q, lf: lfTree, sql: sqlTree, form: 'compare2', tags: [dir], cls, depth: 1, check };
  }

  /**
   * "Which growers own more than 2 orchards?": a count or sum over the child rows of each entity.
   * `depth` 2 is the plain form; 3 adds a described set to the outer restrictions.
   */
  group(depth: number): Example {
    const g = this.rng.pick(GROUPS);
    const op = this.rng.pick(['gt', 'ge'] as const);
    const k = this.rng.pick(g.thresholds);
    const outerMods: Mod[] = [];
    if (depth > 2) {
      const m = this.s.relMod(g.outer, depth - 2);
      if (m) outerMods.push(m);
    } else if (this.rng.chance(0.35)) {
      const m = this.rng.chance(0.5) ? this.s.cmpMod(g.outer) : this.s.relMod(g.outer, 0);
      if (m && m.k !== 'between') outerMods.push(m);
    }
    const outer: Desc = { cls: g.outer, sub: null, mods: outerMods };
    // restrictions of the counted / summed child rows: a subclass or one numeric restriction
    let child: Desc = { cls: g.child, sub: null, mods: [] };
    if (g.child === 'lot' && this.rng.chance(0.35)) {
      const year: Mod = { k: 'cmp', measure: 'year', op: this.rng.pick(['eq', 'lt', 'gt'] as const), value: this.rng.pick(THRESHOLDS.year) };
      child = g.agg === 'count' && this.rng.chance(0.4)
        ? { cls: 'lot', sub: this.rng.pick(SUBCLASSES.filter((s) => s.of === 'lot')).name, mods: [] }
        : { cls: 'lot', sub: null, mods: [year] };
    } else if (g.child === 'orchard' && g.agg === 'count' && this.rng.chance(0.35)) {
      const m = this.s.cmpMod('orchard');
      if (m && m.k === 'cmp') child = { cls: 'orchard', sub: null, mods: [m] };
    }
    const plural = k !== 1;
    const slots = {
      o: np(outer, true, this.rng.pick),
      op: OP_TEXT[op],
      k: String(k),
      c: np(child, plural, this.rng.pick),
      cp: post(child, true, this.rng.pick),
    };
    const q = fill(this.rng.pick(g.frames), slots);

    // logical form
    const vars = new VarSupply();
    const xv = vars.next();
    const x = lf.var(xv);
    const outerConj = lfDesc(outer, x, vars);
    const yv = vars.next();
    const y = lf.var(yv);
    let link: Node;
    if (g.outer === 'grower' && g.child === 'orchard') link = lf.rel('owns', x, y);
    else if (g.outer === 'grower') {
      const zv = vars.next();
      const z = lf.var(zv);
      link = lf.exists(zv, lf.conj([lf.is('orchard', z), lf.rel('owns', x, z), lf.rel('harvested_from', y, z)]));
    } else if (g.outer === 'orchard') link = lf.rel('harvested_from', y, x);
    else if (g.outer === 'variety') link = lf.rel('variety_of', y, x);
    else link = lf.rel('stored_in', y, x);
    const childLf = lfDesc(child, y, vars);
    const childBody = lf.conj([childLf[0], link, ...childLf.slice(1)]);
    const aggLf = g.agg === 'count' ? lf.count(yv, childBody) : lf.total(yv, childBody, g.measure!);
    const lfTree = lf.lambda(xv, lf.conj([...outerConj, lf.compare(aggLf, op, lf.literal(k))]));

    // SQL
    const ot = this.table(g.outer);
    const joins: Node[] = [];
    if (g.outer === 'grower') {
      joins.push(sql.join('orchards', sql.col('grower_id', 'orchards'), sql.col('id', 'growers')));
      if (g.child === 'lot') joins.push(sql.join('lots', sql.col('orchard_id', 'lots'), sql.col('id', 'orchards')));
    } else {
      const fk = { orchard: 'orchard_id', variety: 'variety_id', shed: 'shed_id' }[g.outer];
      joins.push(sql.join('lots', sql.col(fk, 'lots'), sql.col('id', ot)));
    }
    const childTable = this.table(g.child);
    const aggSql = g.agg === 'count' ? sql.countRows() : sql.apply('sum', sql.col(g.measure === 'hectares' ? 'hectares' : 'tonnes', childTable));
    const sqlTree = sql.select({
      items: [sql.column(sql.col('name', ot))], from: ot, joins,
      where: sql.conj([...sqlDesc(outer, true), ...sqlDesc(child, true)]),
      group: [sql.col('id', ot)],
      having: sql.having(aggSql, op, sql.num(k)),
    });
    const tags = new Set([...descTags(outer), ...[...descTags(child)].map((t) => `child-${t}`), `${g.child}-${g.agg}`]);
    const d = 1 + Math.max(descDepth(outer), descDepth(child));
    return { question: q, lf: lfTree, sql: sqlTree, form: 'group', tags: [...tags], cls: g.outer, depth: d };
  }
}


