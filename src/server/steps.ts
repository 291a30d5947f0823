/**
 * Step-by-step views of a decoded sequence for the playground: for each chosen token, how many
 * tokens the grammar allowed at that point (the mask the constrained decoder applies, recomputed
 * by replaying the tokens through the constraint), whether the chosen token was among them, and
 * the text so far; and a tree view of the final program in which every node knows where its text
 * starts and ends, so a client can show the tree growing as the text grows.
 *
 * Cost: one mask fill per token (the mask engine's cost) plus a popcount of vocabSize / 32 words.
 */
import type { Grammar, LayoutItem } from '../description/ir.ts';
import type { MaskConstraint, MaskState } from '../masks/index.ts';
import { printTokens, valueToLexeme, type Tree } from '../tree/index.ts';

export interface Step {
  readonly index: number;
  readonly id: number;
  readonly token: string;
  /** tokens the constrained decoder allowed before this one was chosen (the grammar's mask under
   * the length budget left); null once the text left the grammar */
  readonly allowed_count: number | null;
  /** whether the chosen token was among them (null once the text left the grammar earlier) */
  readonly allowed: boolean | null;
  /** whether the text after this token is still a prefix of some program (null after it was not) */
  readonly viable: boolean | null;
  /** whether the text after this token is a whole program (end of sequence allowed); null after it left the grammar */
  readonly complete: boolean | null;
  /** for a byte-fallback token (`<0xNN>`), its byte NN (which an ordinary token may spell too); else null */
  readonly byte: number | null;
  /** output text after this token */
  readonly text: string;
  /** non-whitespace characters in `text` (what tree-view offsets count) */
  readonly filled: number;
}

export interface StepsResult {
  readonly steps: Step[];
  /** tokens the grammar allowed where the sequence ended (EOS among them when complete) */
  readonly final_allowed_count: number | null;
  /** the first step after which the text is no longer a prefix of any program, or null */
  readonly left_grammar_at: number | null;
  /** the first step whose token kept the text a program prefix but left too few tokens to finish
   * it (the length budget), or null */
  readonly over_budget_at: number | null;
}

function popcount(mask: Uint32Array): number {
  let n = 0;
  for (let i = 0; i < mask.length; i++) {
    let v = mask[i];
    v = v - ((v >>> 1) & 0x55555555);
    v = (v & 0x33333333) + ((v >>> 2) & 0x33333333);
    n += (((v + (v >>> 4)) & 0x0f0f0f0f) * 0x01010101) >>> 24;
  }
  return n;
}

const nonSpace = (s: string) => s.replace(/\s+/g, '').length;

/**
 * Replays `tokens` through `constraint` with the decoder's budget (maxTokens − step), so the counts
 * are those the constrained decoder saw (for an unconstrained output: what it would have allowed).
 */
export function replaySteps(
  constraint: MaskConstraint,
  tokens: readonly number[],
  tokenTexts: readonly string[],
  maxTokens: number,
  textOf: (ids: readonly number[]) => string,
  byteOf: (id: number) => number | null = () => null,
): StepsResult {
  const mask = new Uint32Array((constraint.vocabSize + 31) >>> 5);
  let state: MaskState | null = constraint.start();
  const steps: Step[] = [];
  let left: number | null = null;
  let overBudget: number | null = null;
  for (let i = 0; i < tokens.length; i++) {
    let count: number | null = null;
    let allowed: boolean | null = null;
    let viable: boolean | null = null;
    let complete: boolean | null = null;
    if (state !== null) {
      constraint.writeAllowed(state, maxTokens - i, mask);
      count = popcount(mask);
      const id = tokens[i];
      allowed = id < constraint.vocabSize && (mask[id >>> 5] & (1 << (id & 31))) !== 0;
      let next: MaskState | null = null;
      try {
        next = constraint.advance(state, id);
      } catch {
        // advance refuses a token after which the text is no program prefix (or a special token)
      }
      viable = next !== null;
      complete = next !== null && constraint.isComplete(next);
      if (!allowed && viable && overBudget === null) overBudget = i;
      if (!viable) left = i;
      state = next;
    }
    const text = textOf(tokens.slice(0, i + 1));
    steps.push({ index: i, id: tokens[i], token: tokenTexts[i], allowed_count: count, allowed, viable, complete, byte: byteOf(tokens[i]), text, filled: nonSpace(text) });
  }
  let final: number | null = null;
  if (state !== null) {
    constraint.writeAllowed(state, Math.max(0, maxTokens - tokens.length), mask);
    final = popcount(mask);
  }
  return { steps, final_allowed_count: final, left_grammar_at: left, over_budget_at: overBudget };
}

export interface TreeViewNode {
  /** constructor name, or the lexeme of a leaf */
  readonly label: string;
  /** field of the parent this node sits in (`args[1]` for list elements; null at the root) */
  readonly field: string | null;
  /** extent in the program text, counted in non-whitespace characters: [start, end) */
  readonly start: number;
  readonly end: number;
  readonly children: TreeViewNode[];
}

/**
 * A tree view of `tree` with text extents. The canonical tokens (printTokens) are walked along the
 * layouts, as the printer produced them: a text item is one token, a slot is its value's tokens
 * (wrapped in the sort's parens when the printer added them), list elements are separated by their
 * separator token. So each node covers exactly its own tokens, keywords included. Offsets skip
 * whitespace, so they hold for any spacing of the same tokens (the model may space differently from
 * the canonical print). Should the walk ever disagree with the tokens, the view is the root alone.
 */
export function treeView(grammar: Grammar, tree: unknown): TreeViewNode {
  const byName = new Map(grammar.constructors.map((c) => [c.name, c]));
  const sorts = new Map(grammar.sorts.map((x) => [x.name, x]));
  const tokenClass = new Map(grammar.tokens.map((t) => [t.name, t]));
  const nameToken = new Map(grammar.nameSets.map((n) => [n.name, tokenClass.get(n.token)!]));
  const toks = printTokens(grammar, tree);
  const offs = [0];
  for (const t of toks) offs.push(offs[offs.length - 1] + nonSpace(t.text));
  let at = 0;
  const take = (text: string): boolean => {
    if (at < toks.length && toks[at].text === text) {
      at++;
      return true;
    }
    return false;
  };

  // each returns the view of what it consumed, or null (and `at` restored) when the tokens disagree
  const node = (value: Tree, field: string | null): TreeViewNode | null => {
    const ctor = byName.get(value.kind);
    if (ctor === undefined) return null;
    const start = at;
    const plain = body(value, ctor, field, start);
    if (plain !== null) return plain;
    at = start;
    const parens = sorts.get(ctor.sort)?.parens;
    if (parens && take(parens.open)) {
      const inner = body(value, ctor, field, start);
      if (inner !== null && take(parens.close)) return { ...inner, end: offs[at] };
    }
    at = start;
    return null;
  };
  const body = (value: Tree, ctor: (typeof grammar.constructors)[number], field: string | null, start: number): TreeViewNode | null => {
    const children: TreeViewNode[] = [];
    const fields = new Map(ctor.fields.map((f) => [f.name, f]));
    const one = (v: unknown, f: (typeof ctor.fields)[number], label: string): boolean => {
      if (f.type.kind === 'sort') {
        const child = node(v as Tree, label);
        if (child === null) return false;
        children.push(child);
        return true;
      }
      const cls = f.type.kind === 'token' ? tokenClass.get(f.type.name) : nameToken.get(f.type.name);
      const lexeme = cls ? valueToLexeme(cls.value, v as string | number) : String(v);
      const from = at;
      if (!take(lexeme)) return false;
      children.push({ label: lexeme, field: label, start: offs[from], end: offs[at], children: [] });
      return true;
    };
    const items = (list: readonly LayoutItem[]): boolean => {
      for (const it of list) {
        if (it.kind === 'text') {
          if (!take(it.text)) return false;
        } else if (it.kind === 'blank') {
          continue; // a declared blank prints no token
        } else if (it.kind === 'when') {
          const v = value[it.field];
          const present = Array.isArray(v) ? v.length > 0 : v !== null && v !== undefined;
          if (present && !items(it.items)) return false;
        } else {
          const f = fields.get(it.field);
          if (f === undefined) return false;
          const v = value[it.field];
          if (Array.isArray(v)) {
            for (let i = 0; i < v.length; i++) {
              if (i > 0 && it.sep !== null && !take(it.sep)) return false;
              if (!one(v[i], f, `${it.field}[${i}]`)) return false;
            }
          } else if (v !== null && v !== undefined && !one(v, f, it.field)) return false;
        }
      }
      return true;
    };
    if (!items(ctor.layout)) return null;
    return { label: value.kind, field, start: offs[start], end: offs[at], children };
  };

  const root = node(tree as Tree, null);
  if (root !== null && at === toks.length) return root;
  return { label: (tree as Tree).kind, field: null, start: 0, end: offs[toks.length], children: [] };
}
