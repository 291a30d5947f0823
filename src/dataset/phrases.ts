/**
 * English phrasings of described sets and restrictions, several per construction. Templates may
 * contain `{plural|singular}` agreement alternatives; `{v}`, `{lo}`, `{hi}`, `{t}`, `{s}` are slots.
 */
import type { EntityClass } from '../exec/lexicon.ts';
import type { Desc, Mod, Target } from './semantics.ts';
import type { CmpName } from './trees.ts';

export type Pick = <T>(xs: readonly T[]) => T;

export const MONTHS = [
  '', 'January', 'February', 'March', 'April', 'May', 'June',
  'July', 'August', 'September', 'October', 'November', 'December',
];

/** Picks the plural or singular side of every `{a|b}` in a template. */
export function agree(template: string, plural: boolean): string {
  return template.replace(/\{([^{}|]*)\|([^{}|]*)\}/g, (_m, a: string, b: string) => (plural ? a : b));
}

export function fill(template: string, slots: Readonly<Record<string, string>>): string {
  return template.replace(/\{([a-z]+)\}/g, (m, k: string) => {
    const v = slots[k];
    if (v === undefined) throw new Error(`phrases: no value for ${m} in "${template}"`);
    return v;
  });
}

export function numberText(measure: string, v: number): string {
  return measure === 'harvest_month' ? MONTHS[v] : String(v);
}

const NOUNS: Readonly<Record<string, { pl: readonly string[]; sg: readonly string[] }>> = {
  grower: { pl: ['growers', 'members', 'farmers'], sg: ['grower', 'member', 'farmer'] },
  orchard: { pl: ['orchards', 'orchard blocks'], sg: ['orchard', 'orchard block'] },
  variety: { pl: ['varieties', 'fruit varieties', 'cultivars'], sg: ['variety', 'fruit variety', 'cultivar'] },
  shed: { pl: ['sheds', 'storage sheds', 'cold stores'], sg: ['shed', 'storage shed', 'cold store'] },
  lot: { pl: ['lots', 'harvest lots', 'batches'], sg: ['lot', 'harvest lot', 'batch'] },
  apple: { pl: ['apple varieties', 'apples', 'apple cultivars'], sg: ['apple variety', 'apple'] },
  pear: { pl: ['pear varieties', 'pears', 'pear cultivars'], sg: ['pear variety', 'pear'] },
  cherry: { pl: ['cherry varieties', 'cherries', 'cherry cultivars'], sg: ['cherry variety', 'cherry'] },
  plum: { pl: ['plum varieties', 'plums', 'plum cultivars'], sg: ['plum variety', 'plum'] },
  grade_a: { pl: ['grade A lots', 'grade A batches'], sg: ['grade A lot', 'grade A batch'] },
  grade_b: { pl: ['grade B lots', 'grade B batches'], sg: ['grade B lot', 'grade B batch'] },
  grade_c: { pl: ['grade C lots', 'grade C batches'], sg: ['grade C lot', 'grade C batch'] },
};

/** How a subclass is named after "are not" / "is not". */
const SUB_PRED: Readonly<Record<string, { pl: string; sg: string }>> = {
  apple: { pl: 'apples', sg: 'an apple' },
  pear: { pl: 'pears', sg: 'a pear' },
  cherry: { pl: 'cherries', sg: 'a cherry' },
  plum: { pl: 'plums', sg: 'a plum' },
  grade_a: { pl: 'grade A', sg: 'grade A' },
  grade_b: { pl: 'grade B', sg: 'grade B' },
  grade_c: { pl: 'grade C', sg: 'grade C' },
};

export function noun(desc: { cls: EntityClass; sub: string | null }, plural: boolean, pick: Pick): string {
  const n = NOUNS[desc.sub ?? desc.cls];
  return pick(plural ? n.pl : n.sg);
}

interface CmpPhrases {
  /** after a noun: "orchards above 400 m" */
  readonly post: Partial<Record<CmpName, readonly string[]>>;
  /** a yes/no question about a named entity {s} */
  readonly yn: Partial<Record<CmpName, readonly string[]>>;
  readonly between?: readonly string[];
}

export const CMP: Readonly<Record<string, CmpPhrases>> = {
  joined: {
    post: {
      lt: ['who joined before {v}', 'who {have|has} been members since before {v}', 'that joined before {v}'],
      gt: ['who joined after {v}', 'that joined after {v}', 'who became members after {v}'],
      eq: ['who joined in {v}', 'that joined in {v}', 'who became members in {v}'],
    },
    yn: {
      lt: ['Did {s} join before {v}?', 'Has {s} been a member since before {v}?'],
      gt: ['Did {s} join after {v}?', 'Did {s} become a member after {v}?'],
      eq: ['Did {s} join in {v}?', 'Did {s} become a member in {v}?'],
    },
    between: ['who joined between {lo} and {hi}'],
  },
  hectares: {
    post: {
      gt: ['larger than {v} hectares', 'bigger than {v} ha', 'with more than {v} hectares', 'over {v} hectares'],
      lt: ['smaller than {v} hectares', 'with less than {v} hectares', 'under {v} ha'],
    },
    yn: {
      gt: ['Is {s} larger than {v} hectares?', 'Does {s} have more than {v} hectares?', 'Is {s} bigger than {v} ha?'],
      lt: ['Is {s} smaller than {v} hectares?', 'Does {s} have less than {v} hectares?'],
    },
    between: ['between {lo} and {hi} hectares', 'of {lo} to {hi} hectares'],
  },
  altitude: {
    post: {
      gt: ['above {v} m', 'higher than {v} metres', 'at more than {v} m altitude', 'above {v} metres'],
      lt: ['below {v} m', 'lower than {v} metres', 'at less than {v} m altitude'],
    },
    yn: {
      gt: ['Is {s} above {v} m?', 'Is {s} higher than {v} metres?', 'Does {s} lie above {v} m?'],
      lt: ['Is {s} below {v} m?', 'Is {s} lower than {v} metres?'],
    },
    between: ['between {lo} and {hi} m', 'at {lo} to {hi} metres'],
  },
  planted: {
    post: {
      lt: ['planted before {v}', 'established before {v}', 'that {were|was} planted before {v}'],
      gt: ['planted after {v}', 'established after {v}', 'that {were|was} planted after {v}'],
      eq: ['planted in {v}', 'established in {v}'],
    },
    yn: {
      lt: ['Was {s} planted before {v}?', 'Was {s} established before {v}?'],
      gt: ['Was {s} planted after {v}?', 'Was {s} established after {v}?'],
      eq: ['Was {s} planted in {v}?'],
    },
    between: ['planted between {lo} and {hi}'],
  },
  harvest_month: {
    post: {
      eq: ['harvested in {v}', 'picked in {v}', 'that ripen{|s} in {v}'],
      lt: ['harvested before {v}', 'picked before {v}', 'that ripen{|s} before {v}'],
      gt: ['harvested after {v}', 'picked after {v}', 'that ripen{|s} after {v}'],
    },
    yn: {
      eq: ['Is {s} harvested in {v}?', 'Is {s} picked in {v}?', 'Does {s} ripen in {v}?'],
      lt: ['Is {s} harvested before {v}?', 'Does {s} ripen before {v}?'],
      gt: ['Is {s} harvested after {v}?', 'Does {s} ripen after {v}?'],
    },
  },
  capacity: {
    post: {
      gt: ['with a capacity above {v} tonnes', 'holding more than {v} tonnes', 'with room for more than {v} tonnes'],
      lt: ['with a capacity below {v} tonnes', 'with room for less than {v} tonnes'],
    },
    yn: {
      gt: ['Does {s} have a capacity above {v} tonnes?', 'Can {s} hold more than {v} tonnes?'],
      lt: ['Does {s} have a capacity below {v} tonnes?', 'Is the capacity of {s} below {v} tonnes?'],
    },
    between: ['with a capacity between {lo} and {hi} tonnes'],
  },
  temperature: {
    post: {
      lt: ['colder than {v} degrees', 'kept below {v} degrees', 'at less than {v} degrees'],
      gt: ['warmer than {v} degrees', 'kept above {v} degrees', 'at more than {v} degrees'],
    },
    yn: {
      lt: ['Is {s} colder than {v} degrees?', 'Is {s} kept below {v} degrees?'],
      gt: ['Is {s} warmer than {v} degrees?', 'Is {s} kept above {v} degrees?'],
    },
  },
  tonnes: {
    post: {
      gt: ['of more than {v} tonnes', 'heavier than {v} tonnes', 'weighing over {v} tonnes'],
      lt: ['of less than {v} tonnes', 'lighter than {v} tonnes', 'weighing under {v} tonnes'],
    },
    yn: {},
    between: ['of {lo} to {hi} tonnes', 'weighing between {lo} and {hi} tonnes'],
  },
  year: {
    post: {
      eq: ['harvested in {v}', 'picked in {v}', 'from the {v} harvest'],
      lt: ['harvested before {v}', 'picked before {v}'],
      gt: ['harvested after {v}', 'picked after {v}'],
    },
    yn: {},
    between: ['harvested between {lo} and {hi}'],
  },
};

interface RelPhrases {
  readonly post: readonly string[];
  readonly neg: readonly string[];
  /** yes/no question about a named {s}; any target */
  readonly yn: readonly string[];
}

/** Keyed by `${rel}:${side x takes}`. */
export const REL: Readonly<Record<string, RelPhrases>> = {
  'owns:object': {
    post: ['owned by {t}', 'belonging to {t}', 'that belong{|s} to {t}'],
    neg: ['not owned by {t}', 'that {do|does} not belong to {t}'],
    yn: ['Is {s} owned by {t}?', 'Does {s} belong to {t}?'],
  },
  'owns:subject': {
    post: ['who own{|s} {t}', 'owning {t}', 'that own{|s} {t}'],
    neg: ['who {do|does} not own {t}', 'that {do|does} not own {t}'],
    yn: ['Does {s} own {t}?'],
  },
  'lives_in:subject': {
    post: ['from {t}', 'who live{|s} in {t}', 'based in {t}', 'living in {t}'],
    neg: ['not from {t}', 'who {do|does} not live in {t}', 'not living in {t}'],
    yn: ['Does {s} live in {t}?', 'Is {s} from {t}?', 'Is {s} based in {t}?'],
  },
  'grows:subject': {
    post: ['that grow{|s} {t}', 'growing {t}', 'that cultivate{|s} {t}'],
    neg: ['that {do|does} not grow {t}', 'not growing {t}'],
    yn: ['Does {s} grow {t}?', 'Is {t} grown in {s}?'],
  },
  'grows:object': {
    post: ['grown in {t}', 'grown at {t}', 'that {are|is} grown in {t}'],
    neg: ['not grown in {t}', 'that {are|is} not grown in {t}'],
    yn: ['Is {s} grown in {t}?', 'Is {s} grown at {t}?'],
  },
  'harvested_from:subject': {
    post: ['from {t}', 'harvested from {t}', 'picked at {t}'],
    neg: ['not from {t}', 'not harvested from {t}'],
    yn: [],
  },
  'harvested_from:object': {
    post: ['with {t}', 'that produced {t}', 'that delivered {t}'],
    neg: ['without {t}', 'that produced no {t}'],
    yn: ['Did {s} produce {t}?', 'Has {s} delivered {t}?'],
  },
  'variety_of:subject': {
    post: ['of {t}', 'containing {t}'],
    neg: ['not of {t}'],
    yn: [],
  },
  'variety_of:object': {
    post: ['with {t}', 'that {have|has} {t}'],
    neg: ['without {t}', 'that {have|has} no {t}'],
    yn: ['Are there {t} of {s}?'],
  },
  'stored_in:subject': {
    post: ['stored in {t}', 'kept in {t}', 'held in {t}'],
    neg: ['not stored in {t}', 'not kept in {t}'],
    yn: [],
  },
  'stored_in:object': {
    post: ['storing {t}', 'that hold{|s} {t}', 'that store{|s} {t}'],
    neg: ['not storing {t}', 'that hold{|s} no {t}'],
    yn: ['Does {s} store {t}?', 'Does {s} hold {t}?'],
  },
};

export function targetText(t: Target, pick: Pick): string {
  return t.kind === 'const' ? t.name : np(t.desc, true, pick);
}

/** "orchards above 400 m and owned by Mara Feldwick" (plural) or the singular. */
export function np(desc: Desc, plural: boolean, pick: Pick): string {
  return noun(desc, plural, pick) + post(desc, plural, pick);
}

/** The restrictions after the noun, with a leading space (empty when there are none). */
export function post(desc: Desc, plural: boolean, pick: Pick): string {
  if (desc.mods.length === 0) return '';
  return ' ' + desc.mods.map((m) => modText(m, plural, pick)).join(' and ');
}

export function modText(m: Mod, plural: boolean, pick: Pick): string {
  switch (m.k) {
    case 'cmp': {
      const list = CMP[m.measure].post[m.op];
      if (!list) throw new Error(`phrases: no phrase for ${m.measure} ${m.op}`);
      return agree(fill(pick(list), { v: numberText(m.measure, m.value) }), plural);
    }
    case 'between': {
      const list = CMP[m.measure].between;
      if (!list) throw new Error(`phrases: no between phrase for ${m.measure}`);
      return agree(fill(pick(list), { lo: String(m.lo), hi: String(m.hi) }), plural);
    }
    case 'isa':
      return pick([
        agree(`that {are|is} ${plural ? SUB_PRED[m.sub].pl : SUB_PRED[m.sub].sg}`, plural),
      ]);
    case 'rel':
      return agree(fill(pick(REL[`${m.rel}:${m.side}`].post), { t: targetText(m.target, pick) }), plural);
    case 'or':
      return `${modText(m.left, plural, pick)} or ${modText(m.right, plural, pick)}`;
    case 'not': {
      const inner = m.mod;
      if (inner.k === 'rel') {
        return agree(fill(pick(REL[`${inner.rel}:${inner.side}`].neg), { t: targetText(inner.target, pick) }), plural);
      }
      if (inner.k === 'isa') {
        const p = SUB_PRED[inner.sub];
        return pick([
          agree(`that {are|is} not ${plural ? p.pl : p.sg}`, plural),
          `other than ${p.pl}`,
        ]);
      }
      throw new Error(`phrases: cannot negate a ${inner.k} restriction`);
    }
  }
}

/** A yes/no question saying that named entity `s` satisfies `m`. */
export function ynText(m: Mod, s: string, pick: Pick): string {
  switch (m.k) {
    case 'cmp': {
      const list = CMP[m.measure].yn[m.op];
      if (!list || list.length === 0) throw new Error(`phrases: no yes/no phrase for ${m.measure} ${m.op}`);
      return fill(pick(list), { s, v: numberText(m.measure, m.value) });
    }
    case 'rel':
      return fill(pick(REL[`${m.rel}:${m.side}`].yn), { s, t: targetText(m.target, pick) });
    case 'isa':
      return pick([`Is ${s} ${SUB_PRED[m.sub].sg}?`, `Is ${s} ${SUB_PRED[m.sub].sg} variety?`]);
    default:
      throw new Error(`phrases: no yes/no phrasing for a ${m.k} restriction`);
  }
}
