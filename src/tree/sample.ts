/**
 * The sampler: random well-typed trees, reproducible from a seed.
 *
 * At each node it picks a constructor of the wanted sort among those that (a) have weight > 0 and
 * (b) can still be finished within the remaining depth — `minDepth` tables, computed once per
 * sampler by a fixpoint over constructors, give the depth of the shallowest tree of each
 * constructor with and without a variable in scope. Near the depth bound only shallow
 * constructors remain, so sampling always terminates. Lists get 0–3 extra elements beyond their
 * minimum, optional fields are present half of the time (when the depth allows).
 *
 * Values: name-set fields take a member of the bound set (`names`), or one of five placeholder
 * names generated per set from its token class; `new` variables are generated from their token
 * class and `bound` ones are drawn from the variables in scope; other token values are generated
 * from the class regex and kept only when they print back to themselves (validateTree's rule).
 *
 * `plausible: true` shapes the draw like programs people write (see SampleOptions.plausible);
 * `treewright sample` and the demo use it, property tests use the uniform draw.
 *
 * With `space ""` a tree whose tokens would run together has no text (print.ts); such trees are
 * drawn again (up to 200 times), so every sampled tree prints to text that parses back.
 *
 * Scopes and kinds (grammars with `enter`/`known`/`kind`): the shape is drawn as above, then
 * sample-names.ts chooses the scoped and kinded names so the tree resolves; a shape no choice
 * can fix is drawn again (at most 1000 times per tree), and each returned tree is checked with
 * resolveTree — so every sampled tree resolves under the given names.
 *
 * Cost: O(nodes) per tree after an O(C · F · rounds) table build (C constructors, F fields); with
 * scopes, times the number of draws (a few on the shipped grammars).
 */
import type { Constructor, Field, Grammar, NameBindings } from '../description/ir.ts';
import { grammarInfo, type GrammarInfo, type TokenInfo } from './info.ts';
import { lexemeToValue, nameSpellingProblem, tokenValueProblem, type TokenValue } from './lexeme.ts';
import { bindNames } from '../description/bound.ts';
import { generate } from './regex.ts';
import { resolveTree } from './resolve.ts';
import { fillNames } from './sample-names.ts';
import { mulberry32 } from '../util/random.ts';
import type { Tree, TreeValue } from './validate.ts';
import { printedBlank, printTree, PrintError } from './print.ts';

export interface SampleOptions {
  /** any 32-bit integer; the same seed gives the same trees */
  readonly seed: number;
  /** maximum node depth (the root is depth 1); default 7 */
  readonly maxDepth?: number;
  /** members of open name sets; sets not listed get placeholder names */
  readonly names?: NameBindings;
  /** relative constructor weights (default 1); 0 disables a constructor */
  readonly weights?: Readonly<Record<string, number>>;
  /** sort of the sampled trees (default: the start sort) */
  readonly sort?: string;
  /**
   * Programs a person would write (default false: uniform, for property tests that want odd
   * values): leaf constructors are rare at the root and grow likelier with depth, optional parts
   * and extra list elements are rarer, numbers are small or round, text values are plain words,
   * new variables are named x, y, z … (in the spelling the token class allows) and, once in scope,
   * used more often than names (constructors with a `bound` field weigh 4×). Same contract:
   * well-typed, within maxDepth, weights respected, reproducible from the seed.
   */
  readonly plausible?: boolean;
}

/** Plausible draws: how much likelier a constructor that uses a variable in scope is. */
const VARIABLE_USE = 4;
/** Variable letters in the order people use them. */
const VARIABLE_LETTERS = ['x', 'y', 'z', 'w', 'v', 'u', 't', 's'];
/** Prefixes a variable class may require (`$x`, `?x`, …), tried in this order. */
const VARIABLE_PREFIXES = ['', '$', '?', '_', '@', ':', '%', '#'];
/** Plain words for text values (invented; the cooperative's scenario). */
const PLAIN_WORDS = ['apple', 'pear', 'north', 'river', 'amber', 'cedar', 'meadow', 'stone', 'early', 'red'];

/** Small and round numbers, as people write them in a query (most likely first). */
function plausibleNumber(rand: () => number, decimals: boolean): number {
  const r = rand();
  if (r < 0.4) return 1 + Math.floor(rand() * 10);
  if (r < 0.75) return [10, 20, 25, 50, 100, 150, 200, 250, 300, 400, 500, 1000][Math.floor(rand() * 12)]!;
  if (r < 0.9 || !decimals) return 1990 + Math.floor(rand() * 36);
  return [0.5, 1.5, 2.5, 7.5, 12.5, 0.25][Math.floor(rand() * 6)]!;
}

export interface Sampler {
  /** the next tree of the stream */
  next(): Tree;
}

/** Thrown when the options make sampling impossible (e.g. every constructor of a needed sort disabled). */
export class SampleError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'SampleError';
  }
}

/** One tree (the first of the stream for `seed`). */
export function sampleTree(grammar: Grammar, opts: SampleOptions): Tree {
  return createSampler(grammar, opts).next();
}

const INF = Number.MAX_SAFE_INTEGER;

export function createSampler(grammar: Grammar, opts: SampleOptions): Sampler {
  const info = grammarInfo(grammar);
  const rand = mulberry32(opts.seed);
  const maxDepth = opts.maxDepth ?? 7;
  const sortName = opts.sort ?? grammar.start;
  const names = opts.names ?? {};
  if (!info.sort.has(sortName)) throw new SampleError(`unknown sort ${sortName}`);
  for (const key of Object.keys(opts.weights ?? {})) {
    if (!info.ctor.has(key)) throw new SampleError(`weights: unknown constructor ${key}`);
    const w = opts.weights![key]!;
    if (!(w >= 0) || !Number.isFinite(w)) throw new SampleError(`weights: ${key} must be a finite number ≥ 0, got ${w}`);
  }
  const weight = (c: Constructor) => opts.weights?.[c.name] ?? 1;
  const plausible = opts.plausible === true;
  const tables = minDepthTables(info, names, weight);
  const need = tables.sort(sortName, false);
  if (need >= INF) throw new SampleError(`no finite tree of sort ${sortName} exists with these weights and names`);
  if (need > maxDepth) throw new SampleError(`max depth ${maxDepth} is below the depth ${need} of the smallest ${sortName} tree`);

  // placeholder names for unbound sets: five per set, drawn once
  const placeholders = new Map<string, string[]>();
  for (const set of grammar.nameSets) {
    if (names[set.name] !== undefined) continue;
    const tok = info.token.get(set.token)!;
    const pool: string[] = [];
    if (plausible) for (const w of PLAIN_WORDS) if (pool.length < 5 && nameSpellingProblem(tok, w) === null) pool.push(w);
    for (let attempt = 0; pool.length < 5 && attempt < 500; attempt++) {
      const s = lexeme(tok, rand);
      if (nameSpellingProblem(tok, s) === null && !pool.includes(s)) pool.push(s);
    }
    if (pool.length === 0) throw new SampleError(`cannot invent names for ${set.name} from ${tok.token.name}`);
    placeholders.set(set.name, pool);
  }

  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(rand() * xs.length)]!;

  const node = (sort: string, budget: number, scope: readonly string[]): Tree => {
    const h = scope.length > 0;
    const ctors = info.sort.get(sort)!.constructors.map((n) => info.ctor.get(n)!);
    const eligible = ctors.filter((c) => weight(c) > 0 && tables.ctor(c, h) <= budget);
    // plausible: a program that is one literal is rare, and trees taper — constructors without a
    // field of a sort (leaves) weigh 1/100 at the root, 1/2 one level down; the others halve per
    // level below the second
    const level = maxDepth - budget + 1;
    // plausible, too: once a variable is in scope, the constructors that use one (a `bound` field)
    // weigh VARIABLE_USE times more, so a binder's body mostly speaks about its variable
    const shaped = (c: Constructor): number => {
      if (!plausible) return weight(c);
      const leaf = !c.fields.some((f) => f.type.kind === 'sort');
      const factor = leaf ? (level === 1 ? 0.01 : level === 2 ? 0.5 : 1) : level <= 2 ? 1 : 0.5 ** (level - 2);
      const uses = h && c.fields.some((f) => f.scoping === 'bound') ? VARIABLE_USE : 1;
      return weight(c) * factor * uses;
    };
    let chosen: Constructor;
    if (eligible.length === 0) {
      // unreachable when the tables are right: the caller only asks for sorts that fit
      throw new SampleError(`internal: no ${sort} constructor fits depth ${budget}`);
    } else {
      let total = 0;
      for (const c of eligible) total += shaped(c);
      let r = rand() * total;
      chosen = eligible[eligible.length - 1]!;
      for (const c of eligible) {
        r -= shaped(c);
        if (r < 0) {
          chosen = c;
          break;
        }
      }
    }
    const out: Record<string, TreeValue> = { kind: chosen.name };
    let inScope = scope;
    for (const f of chosen.fields) {
      const v = fieldValue(f, budget - 1, inScope);
      out[f.name] = v;
      if (f.scoping === 'binds') {
        if (typeof v === 'string') inScope = inScope.concat([v]);
        else if (Array.isArray(v)) inScope = inScope.concat(v as string[]);
      }
    }
    return out as Tree;
  };

  const fieldValue = (f: Field, budget: number, scope: readonly string[]): TreeValue => {
    const one = () => element(f, budget, scope);
    switch (f.card) {
      case 'one':
        return one();
      case 'optional':
        return elementPossible(f, budget, scope) && rand() < (plausible ? 0.3 : 0.5) ? one() : null;
      case 'list':
      case 'nonempty': {
        const min = f.card === 'nonempty' ? 1 : 0;
        if (!elementPossible(f, budget, scope)) return [];
        // plausible: a list is seldom empty (9 in 10 have an element), and seldom long
        let n = plausible && min === 0 && rand() < 0.9 ? 1 : min;
        const base = n;
        while (n < base + 3 && rand() < (plausible ? 0.3 : 0.5)) n++;
        const xs: TreeValue[] = [];
        for (let i = 0; i < n; i++) xs.push(one());
        return xs;
      }
    }
  };

  const elementPossible = (f: Field, budget: number, scope: readonly string[]): boolean => {
    if (f.type.kind === 'sort') return tables.sort(f.type.name, scope.length > 0) <= budget;
    if (f.scoping === 'bound') return scope.length > 0;
    if (f.type.kind === 'names') return (names[f.type.name] ?? placeholders.get(f.type.name) ?? []).length > 0;
    return true;
  };

  const element = (f: Field, budget: number, scope: readonly string[]): TreeValue => {
    switch (f.type.kind) {
      case 'sort':
        return node(f.type.name, budget, scope);
      case 'names':
        return pick(names[f.type.name] ?? placeholders.get(f.type.name)!);
      case 'token': {
        if (f.scoping === 'bound') return pick(scope);
        const tok = info.token.get(f.type.name)!;
        if (plausible) {
          const v = f.scoping === 'binds' ? variableName(tok, scope) : plausibleValue(tok, rand);
          if (v !== null) return v;
        }
        return tokenValue(tok, rand);
      }
    }
  };

  const blankable = printedBlank(grammar) === '' && sortName === grammar.start;
  if (!grammar.scoped && !blankable) return { next: () => node(sortName, maxDepth, []) };
  // Two reasons to draw again, both checked on the finished tree:
  // - scopes and kinds: names are chosen after the shape (sample-names.ts); a shape no choice makes
  //   resolve is drawn again, and every tree returned is checked by the resolver itself;
  // - with `space ""` some trees have no text (two tokens would run together; print.ts).
  const bound = grammar.scoped ? bindNames(grammar, opts.names) : null;
  const pool = (set: string): readonly string[] => names[set] ?? placeholders.get(set) ?? [];
  return {
    next: () => {
      let last = '';
      let blanks = 0;
      for (let attempt = 0; attempt < MAX_ATTEMPTS; attempt++) {
        const t = node(sortName, maxDepth, []);
        if (bound !== null) {
          if (!fillNames(grammar, t, bound, pool, rand)) {
            last = 'no choice of names resolves the drawn shape';
            continue;
          }
          const issue = resolveTree(grammar, t, bound)[0];
          if (issue !== undefined) {
            last = `${issue.path}: ${issue.message}`;
            continue;
          }
        }
        if (!blankable) return t;
        try {
          printTree(grammar, t);
          return t;
        } catch (e) {
          if (!(e instanceof PrintError)) throw e;
          if (++blanks >= 200) break;
          last = 'no text';
        }
      }
      if (blanks >= 200 || last === 'no text') {
        throw new SampleError(`200 sampled ${sortName} trees in a row have no text: with \`space ""\` their tokens run together; give the layout literal separators between word-like items, or weight the constructors that glue them lower`);
      }
      throw new SampleError(`no tree that resolves in ${MAX_ATTEMPTS} draws (last: ${last}); bind more names or allow deeper trees`);
    },
  };
}

/** draws of a shape before the sampler gives up on a scoped grammar */
const MAX_ATTEMPTS = 1000;

/** The first of x, y, z, … (with a prefix the class requires) not already in scope, or null. */
function variableName(tok: TokenInfo, scope: readonly string[]): string | null {
  for (const prefix of VARIABLE_PREFIXES) {
    if (tokenValueProblem(tok, prefix + 'x') !== null && tokenValueProblem(tok, prefix + 'y') !== null) continue;
    for (const letter of VARIABLE_LETTERS) {
      const name = prefix + letter;
      if (!scope.includes(name) && tokenValueProblem(tok, name) === null) return name;
    }
  }
  return null;
}

/** A small or round number, or a plain word, when the class can spell one; else null. */
function plausibleValue(tok: TokenInfo, rand: () => number): TokenValue | null {
  const kind = tok.token.value;
  for (let attempt = 0; attempt < 40; attempt++) {
    let v: TokenValue;
    if (kind === 'int' || kind === 'number') v = plausibleNumber(rand, kind === 'number');
    else v = PLAIN_WORDS[Math.floor(rand() * PLAIN_WORDS.length)]!;
    if (tokenValueProblem(tok, v) === null) return v;
  }
  return null;
}

function lexeme(tok: TokenInfo, rand: () => number): string {
  const parts: string[] = [];
  generate(tok.token.regex.rx, rand, parts);
  return parts.join('');
}

/** A random valid value of a token class: generated lexemes are kept when they print back to themselves. */
export function tokenValue(tok: TokenInfo, rand: () => number): TokenValue {
  for (let attempt = 0; attempt < 1000; attempt++) {
    const v = lexemeToValue(tok.token.value, lexeme(tok, rand));
    if (v !== null && tokenValueProblem(tok, v) === null) return v;
  }
  throw new SampleError(`cannot generate a valid ${tok.token.name} value from /${tok.token.pattern}/`);
}

interface MinDepthTables {
  /** depth of the shallowest tree of the sort; `h`: a variable is in scope */
  sort(name: string, h: boolean): number;
  ctor(c: Constructor, h: boolean): number;
  /** depth below the node that the field needs (0 for fields that need no subtree) */
  field(f: Field, h: boolean): number;
}

/** Shortest-derivation depths with and without a variable in scope (a Bellman–Ford style fixpoint). */
function minDepthTables(info: GrammarInfo, names: NameBindings, weight: (c: Constructor) => number): MinDepthTables {
  const g = info.grammar;
  const sortIdx = new Map(g.sorts.map((s, i) => [s.name, i]));
  const sd = [new Array<number>(g.sorts.length).fill(INF), new Array<number>(g.sorts.length).fill(INF)];
  const cd = [new Array<number>(g.constructors.length).fill(INF), new Array<number>(g.constructors.length).fill(INF)];
  const fieldNeed = (f: Field, h: boolean): number => {
    const required = f.card === 'one' || f.card === 'nonempty';
    switch (f.type.kind) {
      case 'sort':
        return required ? sd[h ? 1 : 0][sortIdx.get(f.type.name)!] : 0;
      case 'token':
        return required && f.scoping === 'bound' && !h ? INF : 0;
      case 'names': {
        const members = names[f.type.name];
        return required && members !== undefined && members.length === 0 ? INF : 0;
      }
    }
  };
  const ctorDepth = (c: Constructor, h: boolean): number => {
    let scope = h;
    let deepest = 0;
    for (const f of c.fields) {
      const need = fieldNeed(f, scope);
      if (need >= INF) return INF;
      deepest = Math.max(deepest, need);
      if (f.scoping === 'binds' && (f.card === 'one' || f.card === 'nonempty')) scope = true;
    }
    return 1 + deepest;
  };
  for (let changed = true; changed; ) {
    changed = false;
    for (const h of [false, true]) {
      const k = h ? 1 : 0;
      for (const c of g.constructors) {
        if (weight(c) <= 0) continue;
        const d = ctorDepth(c, h);
        if (d < cd[k][c.index]) {
          cd[k][c.index] = d;
          changed = true;
        }
        const si = sortIdx.get(c.sort)!;
        if (d < sd[k][si]) {
          sd[k][si] = d;
          changed = true;
        }
      }
    }
  }
  return {
    sort: (name, h) => sd[h ? 1 : 0][sortIdx.get(name)!],
    ctor: (c, h) => cd[h ? 1 : 0][c.index],
    field: (f, h) => fieldNeed(f, h),
  };
}
