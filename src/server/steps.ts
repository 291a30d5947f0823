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
  /** tokens the grammar allowed before this one was chosen; null once the text left the grammar */
  readonly allowed_count: number | null;
  /** whether the chosen token was allowed (null once the text left the grammar earlier) */
  readonly allowed: boolean | null;
  /** output text after this token */
  readonly text: string;
  /** non-whitespace characters in `text` (what tree-view offsets count) */
  readonly filled: number;
}

export interface StepsResult {
  readonly steps: Step[];
  /** tokens the grammar allowed where the sequence ended (EOS among them when complete) */
  readonly final_allowed_count: number | null;
  /** the first step whose token the grammar did not allow, or null */
  readonly left_grammar_at: number | null;
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
): StepsResult {
  const mask = new Uint32Array((constraint.vocabSize + 31) >>> 5);
  let state: MaskState | null = constraint.start();
  const steps: Step[] = [];
  let left: number | null = null;
  for (let i = 0; i < tokens.length; i++) {
    let count: number | null = null;
    let allowed: boolean | null = null;
    if (state !== null) {
      constraint.fillMask(state, maxTokens - i, mask);
      count = popcount(mask);
      const id = tokens[i];
      allowed = id < constraint.vocabSize && (mask[id >>> 5] & (1 << (id & 31))) !== 0;
      if (allowed) state = constraint.advance(state, id);
      else {
        state = null;
        left = i;
      }
    }
    const text = textOf(tokens.slice(0, i + 1));
    steps.push({ index: i, id: tokens[i], token: tokenTexts[i], allowed_count: count, allowed, text, filled: nonSpace(text) });
  }
  let final: number | null = null;
  if (state !== null) {
    constraint.fillMask(state, maxTokens - tokens.length, mask);
    final = popcount(mask);
  }
  return { steps, final_allowed_count: final, left_grammar_at: left };
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

interface Draft {
  label: string;
  field: string | null;
  /** canonical token range [first, last] of the leaves below; -1 when there are none */
  first: number;
  last: number;
  children: Draft[];
}

/**
 * A tree view of `tree` with text extents. Leaves (token and name values) are matched, in layout
 * order, to the canonical tokens (printTokens); a node's extent runs from just after the leaf
 * before it (so keywords that introduce a node belong to it) to its own last leaf. Offsets skip
 * whitespace, so they hold for any spacing of the same tokens (the model may space differently
 * from the canonical print).
 */
export function treeView(grammar: Grammar, tree: unknown): TreeViewNode {
  const byName = new Map(grammar.constructors.map((c) => [c.name, c]));
  const tokenClass = new Map(grammar.tokens.map((t) => [t.name, t]));
  const nameToken = new Map(grammar.nameSets.map((n) => [n.name, tokenClass.get(n.token)!]));
  const toks = printTokens(grammar, tree);
  const offs = [0];
  for (const t of toks) offs.push(offs[offs.length - 1] + nonSpace(t.text));
  let cursor = 0;
  const leaf = (lexeme: string, field: string): Draft => {
    for (let i = cursor; i < toks.length; i++) {
      if (toks[i].text === lexeme) {
        cursor = i + 1;
        return { label: lexeme, field, first: i, last: i, children: [] };
      }
    }
    return { label: lexeme, field, first: -1, last: -1, children: [] };
  };
  const visit = (node: Tree, field: string | null): Draft => {
    const ctor = byName.get(node.kind);
    const children: Draft[] = [];
    const fieldOf = new Map(ctor?.fields.map((f) => [f.name, f]) ?? []);
    const slot = (name: string) => {
      const f = fieldOf.get(name);
      if (f === undefined) return;
      const value = node[name];
      const one = (v: unknown, label: string) => {
        if (v === null || v === undefined) return;
        if (f.type.kind === 'sort') children.push(visit(v as Tree, label));
        else {
          const cls = f.type.kind === 'token' ? tokenClass.get(f.type.name) : nameToken.get(f.type.name);
          const lexeme = cls ? valueToLexeme(cls.value, v as string | number) : String(v);
          children.push(leaf(lexeme, label));
        }
      };
      if (Array.isArray(value)) value.forEach((v, i) => one(v, `${name}[${i}]`));
      else one(value, name);
    };
    const walk = (items: readonly LayoutItem[]) => {
      for (const it of items) {
        if (it.kind === 'slot') slot(it.field);
        else if (it.kind === 'when') walk(it.items);
      }
    };
    walk(ctor?.layout ?? []);
    const placed = children.filter((c) => c.first >= 0);
    return { label: node.kind, field, first: placed.length ? placed[0].first : -1, last: placed.length ? placed[placed.length - 1].last : -1, children };
  };
  const root = visit(tree as Tree, null);
  // extents: a node starts right after the last token placed before it, and ends at its last leaf
  // (nodes without leaves end where the next token placed after them starts)
  const finish = (d: Draft, lo: number, hi: number): TreeViewNode => {
    const start = lo;
    const end = d.last >= 0 ? d.last + 1 : hi;
    const kids: TreeViewNode[] = [];
    let prev = lo;
    d.children.forEach((c, i) => {
      let nextStart = end;
      for (let j = i + 1; j < d.children.length; j++) if (d.children[j].first >= 0) { nextStart = d.children[j].first; break; }
      const child = finish(c, c.first >= 0 ? Math.max(prev, lo) : prev, c.first >= 0 ? c.last + 1 : nextStart);
      kids.push(child);
      if (c.last >= 0) prev = c.last + 1;
    });
    return { label: d.label, field: d.field, start: offs[start], end: offs[Math.max(start, end)], children: kids };
  };
  return finish(root, 0, toks.length);
}
