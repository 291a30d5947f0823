/**
 * Lookup tables over a Grammar that every part of the tree stage shares: constructors, sorts,
 * token classes and name sets by name, token lexeme tests (the class DFA), operator positions. Built once per
 * Grammar object (the IR is immutable) and cached in a WeakMap.
 */
import type { Constructor, Field, Grammar, NameSet, Sort, TokenClass } from '../description/ir.ts';
import { runDfa, type Rx } from '../description/regex/index.ts';

/** Where an operator constructor's operands sit in its layout. */
export interface OperandSlots {
  /** field written first (infix, postfix) */
  readonly left: string | null;
  /** field written last (infix, prefix) */
  readonly right: string | null;
}

export interface TokenInfo {
  readonly token: TokenClass;
  /**
   * Does the class pattern match `text` as a whole lexeme? (keywords included, even for a
   * `reserved` class). Runs the class DFA: linear time, never a backtracking RegExp.
   */
  matches(text: string): boolean;
  /** the regex IR (parsed once by the description stage) */
  rx(): Rx;
  /** keywords of the grammar that are lexemes of this class (excluded when `reserved`) */
  readonly keywordClash: readonly string[];
}

export interface GrammarInfo {
  readonly grammar: Grammar;
  readonly ctor: ReadonlyMap<string, Constructor>;
  readonly sort: ReadonlyMap<string, Sort>;
  readonly token: ReadonlyMap<string, TokenInfo>;
  readonly nameSet: ReadonlyMap<string, NameSet>;
  readonly keywords: ReadonlySet<string>;
  /** operand slots of operator constructors, by constructor name */
  readonly operands: ReadonlyMap<string, OperandSlots>;
  /** field by constructor name and field name */
  field(ctor: string, field: string): Field | undefined;
  /** precedence levels of a sort's operators, ascending (empty when the sort has none) */
  readonly levels: ReadonlyMap<string, readonly number[]>;
}

const cache = new WeakMap<Grammar, GrammarInfo>();
const utf8 = new TextEncoder();

export function grammarInfo(grammar: Grammar): GrammarInfo {
  let info = cache.get(grammar);
  if (info === undefined) {
    info = build(grammar);
    cache.set(grammar, info);
  }
  return info;
}

function build(grammar: Grammar): GrammarInfo {
  const ctor = new Map(grammar.constructors.map((c) => [c.name, c]));
  const sort = new Map(grammar.sorts.map((s) => [s.name, s]));
  const nameSet = new Map(grammar.nameSets.map((n) => [n.name, n]));
  const token = new Map<string, TokenInfo>();
  for (const t of grammar.tokens) {
    const dfa = t.regex.dfa;
    token.set(t.name, {
      token: t,
      matches: (text) => dfa.accept[runDfa(dfa, dfa.start, utf8.encode(text))] === 1 || t.regex.keywords.includes(text),
      rx: () => t.regex.rx,
      keywordClash: t.regex.keywords,
    });
  }
  const fields = new Map<string, Map<string, Field>>();
  for (const c of grammar.constructors) fields.set(c.name, new Map(c.fields.map((f) => [f.name, f])));
  const operands = new Map<string, OperandSlots>();
  const levels = new Map<string, number[]>();
  for (const c of grammar.constructors) {
    if (c.operator === null) continue;
    const first = c.layout[0];
    const last = c.layout[c.layout.length - 1];
    const slot = (item: typeof first | undefined) => (item !== undefined && item.kind === 'slot' ? item.field : null);
    const fx = c.operator.fixity;
    operands.set(c.name, {
      left: fx === 'prefix' ? null : slot(first),
      right: fx === 'postfix' ? null : slot(last),
    });
    const ls = levels.get(c.sort) ?? [];
    if (!ls.includes(c.operator.precedence)) ls.push(c.operator.precedence);
    levels.set(c.sort, ls);
  }
  for (const ls of levels.values()) ls.sort((a, b) => a - b);
  return {
    grammar,
    ctor,
    sort,
    token,
    nameSet,
    keywords: new Set(grammar.keywords),
    operands,
    levels,
    field: (c, f) => fields.get(c)?.get(f),
  };
}

/** The token class that spells values of a token or name-set field type. */
export function spellingToken(info: GrammarInfo, type: Field['type']): TokenInfo | undefined {
  if (type.kind === 'token') return info.token.get(type.name);
  if (type.kind === 'names') {
    const set = info.nameSet.get(type.name);
    return set === undefined ? undefined : info.token.get(set.token);
  }
  return undefined;
}
