/**
 * A fact base: the closed-world, finite model that logical forms are evaluated in.
 *
 * Entities are numbered 0..n−1 in sorted name order; classes are membership bytes per entity;
 * relations are sets of numeric pair keys (subject·n + object); measures are Float64Arrays with
 * NaN where the measure is undefined for an entity (a partial function). Built once, never
 * changed afterwards.
 */
import type { NameBindings } from '../description/ir.ts';
import { withFacts } from '../tree/names.ts';

/** Plain description of a model, e.g. from a lexicon reading database rows. */
export interface FactsInput {
  /** every entity of the domain (quantifiers range over all of them) */
  readonly entities: Iterable<string>;
  /** the entities that are not constants of the language (e.g. unnamed rows); default none */
  readonly anonymous?: Iterable<string>;
  readonly classes: Readonly<Record<string, Iterable<string>>>;
  readonly relations: Readonly<Record<string, Iterable<readonly [string, string]>>>;
  readonly measures: Readonly<Record<string, Iterable<readonly [string, number]>>>;
  /** entity → its kind (grower, orchard, …); entities not listed have none. Default: none. */
  readonly kinds?: Readonly<Record<string, string>>;
}

/**
 * Kinds read off the facts: an entity's kind as given; a class's, relation side's or measure's
 * kind is the one kind all its entities share (null when they have none, or several, or there are
 * no entities to tell).
 */
export interface FactKinds {
  /** every kind, sorted */
  readonly kinds: readonly string[];
  /** kind per entity ID, or null */
  readonly entity: readonly (string | null)[];
  readonly classes: ReadonlyMap<string, string | null>;
  readonly relations: ReadonlyMap<string, readonly [string | null, string | null]>;
  readonly measures: ReadonlyMap<string, string | null>;
}

export interface FactBase {
  /** entity names, sorted; an entity's ID is its index here */
  readonly entities: readonly string[];
  readonly entityId: ReadonlyMap<string, number>;
  /** the entities a program may name (the `Entity` name set), sorted */
  readonly constants: readonly string[];
  /** class name → membership (1 = member) indexed by entity ID */
  readonly classes: ReadonlyMap<string, Uint8Array>;
  /** class name → member IDs in increasing order (to range a variable over a class) */
  readonly classMembers: ReadonlyMap<string, Int32Array>;
  /** relation name → set of subject·n + object */
  readonly relations: ReadonlyMap<string, ReadonlySet<number>>;
  /** measure name → value per entity ID, NaN where undefined */
  readonly measures: ReadonlyMap<string, Float64Array>;
  readonly kinds: FactKinds;
}

/** Builds a fact base; every name used by a class, relation or measure must be a declared entity. */
export function makeFactBase(input: FactsInput): FactBase {
  const entities = [...new Set(input.entities)].sort();
  const entityId = new Map(entities.map((e, i) => [e, i]));
  const n = entities.length;
  const id = (name: string, where: string): number => {
    const i = entityId.get(name);
    if (i === undefined) throw new Error(`fact base: ${where} names "${name}", which is not an entity`);
    return i;
  };
  const classes = new Map<string, Uint8Array>();
  for (const [name, members] of Object.entries(input.classes)) {
    const bits = new Uint8Array(n);
    for (const m of members) bits[id(m, `class ${name}`)] = 1;
    classes.set(name, bits);
  }
  const relations = new Map<string, Set<number>>();
  for (const [name, pairs] of Object.entries(input.relations)) {
    const set = new Set<number>();
    for (const [s, o] of pairs) set.add(id(s, `relation ${name}`) * n + id(o, `relation ${name}`));
    relations.set(name, set);
  }
  const measures = new Map<string, Float64Array>();
  for (const [name, values] of Object.entries(input.measures)) {
    const arr = new Float64Array(n).fill(NaN);
    for (const [e, v] of values) {
      if (!Number.isFinite(v)) throw new Error(`fact base: measure ${name} of "${e}" is not a finite number`);
      arr[id(e, `measure ${name}`)] = v;
    }
    measures.set(name, arr);
  }
  const classMembers = new Map<string, Int32Array>();
  for (const [name, bits] of classes) {
    const ids: number[] = [];
    for (let i = 0; i < n; i++) if (bits[i] === 1) ids.push(i);
    classMembers.set(name, Int32Array.from(ids));
  }
  const anonymous = new Set(input.anonymous ?? []);
  for (const a of anonymous) id(a, 'the anonymous list');
  const constants = entities.filter((e) => !anonymous.has(e));
  return { entities, entityId, constants, classes, classMembers, relations, measures, kinds: factKinds(entities, input.kinds ?? {}, id, classMembers, relations, measures) };
}

function factKinds(
  entities: readonly string[],
  given: Readonly<Record<string, string>>,
  id: (name: string, where: string) => number,
  classMembers: ReadonlyMap<string, Int32Array>,
  relations: ReadonlyMap<string, ReadonlySet<number>>,
  measures: ReadonlyMap<string, Float64Array>,
): FactKinds {
  const n = entities.length;
  const entity: (string | null)[] = new Array(n).fill(null);
  for (const [e, k] of Object.entries(given)) entity[id(e, 'the kinds list')] = k;
  /** the one kind of the entities, or null */
  const common = (ids: Iterable<number>): string | null => {
    let k: string | null | undefined;
    for (const i of ids) {
      const x = entity[i]!;
      if (x === null || (k !== undefined && k !== x)) return null;
      k = x;
    }
    return k ?? null;
  };
  const classes = new Map([...classMembers].map(([c, ids]) => [c, common(ids)] as const));
  const rels = new Map<string, readonly [string | null, string | null]>();
  for (const [r, pairs] of relations) {
    const subj: number[] = [];
    const obj: number[] = [];
    for (const key of pairs) {
      subj.push(Math.floor(key / n));
      obj.push(key % n);
    }
    rels.set(r, [common(subj), common(obj)]);
  }
  const ms = new Map<string, string | null>();
  for (const [m, values] of measures) {
    const ids: number[] = [];
    values.forEach((v, i) => {
      if (!Number.isNaN(v)) ids.push(i);
    });
    ms.set(m, common(ids));
  }
  const kinds = [...new Set(entity.filter((k): k is string => k !== null))].sort();
  return { kinds, entity, classes, relations: rels, measures: ms };
}

/**
 * The names a fact base binds in the `lf` grammar's name sets, with their kinds (the `Kind` family:
 * an entity's kind, a class's or measure's argument kind, a relation's subject and object kinds).
 */
export function factNames(facts: FactBase): NameBindings {
  const k = facts.kinds;
  const members = {
    Entity: facts.constants,
    Class: [...facts.classes.keys()].sort(),
    Rel: [...facts.relations.keys()].sort(),
    Measure: [...facts.measures.keys()].sort(),
  };
  const one = (m: ReadonlyMap<string, string | null>) => Object.fromEntries([...m].map(([x, kind]) => [x, [kind]]));
  return withFacts(members, {
    owners: {},
    kinds: {
      Entity: Object.fromEntries(facts.constants.map((e) => [e, [k.entity[facts.entityId.get(e)!] ?? null]])),
      Class: one(k.classes),
      Rel: Object.fromEntries([...k.relations].map(([r, sides]) => [r, [...sides]])),
      Measure: one(k.measures),
    },
    families: k.kinds.length > 0 ? { Kind: Object.fromEntries(k.kinds.map((x) => [x, null])) } : {},
    source: 'the fact base',
  });
}
