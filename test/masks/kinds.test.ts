/**
 * Kinds in the masks (automaton/kinds.ts, masks/walk.ts) against the resolver (src/tree/resolve.ts,
 * the reference every stage agrees with; its own rules are tested in test/tree/resolve.test.ts),
 * on the shipped logical-form grammar and its fact base (grammars/lf/samples/names.json):
 * - completeness: every tree the sampler draws (checked with resolveTree) prints to a text the
 *   automaton accepts, and every prefix of it keeps the token that continues it in the mask;
 * - soundness: trees with names swapped at random are accepted exactly when resolveTree reports no
 *   issue; and prefixes that no well-kinded program continues are refused (worked cases below,
 *   decided by hand from the fact base: it has no entity of kind lot, and no measure of villages).
 */
import { describe, expect, it } from 'vitest';
import { Automaton } from '../../src/automaton/index.ts';
import { compileMasks } from '../../src/masks/index.ts';
import { createSampler, printTree, resolveTree } from '../../src/tree/index.ts';
import type { Tree } from '../../src/tree/index.ts';
import { grammar, namesFor, rng, vocabulary } from './helpers.ts';

const g = grammar('lf');
const names = namesFor('lf');
const pda = new Automaton(g).bind(names);
const enc = new TextEncoder();

function accepts(text: string): boolean {
  const s = pda.advanceBytes(pda.start, enc.encode(text));
  return pda.viable(s) && pda.isComplete(s);
}

function viable(text: string): boolean {
  return pda.viable(pda.advanceBytes(pda.start, enc.encode(text)));
}

/** Replaces name-set values at random with other members of the same set (no kind considered). */
function mutate(tree: Tree, rand: () => number): Tree {
  const ctor = new Map(g.constructors.map((c) => [c.name, c]));
  const visit = (node: Tree): Tree => {
    const c = ctor.get(node.kind)!;
    const out: Record<string, unknown> = { kind: node.kind };
    for (const f of c.fields) {
      const v = node[f.name];
      if (f.type.kind === 'sort') out[f.name] = Array.isArray(v) ? v.map((x) => visit(x as Tree)) : v === null || v === undefined ? v : visit(v as Tree);
      else if (f.type.kind === 'names' && typeof v === 'string' && rand() < 0.35) {
        const members = names[f.type.name]!;
        out[f.name] = members[Math.floor(rand() * members.length)];
      } else out[f.name] = v;
    }
    return out as Tree;
  };
  return visit(tree);
}

describe('kinds: the automaton accepts a logical form exactly when the resolver does', () => {
  it('the kinds are enforced for the shipped grammar', () => {
    expect(pda.automaton.kinds.active).toBe(true);
    expect(pda.kinds).not.toBeNull();
  });

  it('worked cases from the fact base', () => {
    // accepted: each kind agrees
    for (const t of [
      'lambda $x. grower($x)',
      'value: hectares(hilltop_rows)',
      'argmax $x. (orchard($x)) by hectares',
      'lambda $x. $x == mara_feldwick & grower($x)',
      'lambda $x. exists $y. (lot($y) & tonnes($y) > 2)',
    ]) {
      expect(accepts(t), t).toBe(true);
      expect(resolveTree(g, parseTree(t), names), t).toEqual([]);
    }
    // refused: the kinds disagree (the resolver's own cases, test/tree/resolve.test.ts)
    for (const t of ['lambda $x. grower($x) & orchard($x)', 'value: hectares(mara_feldwick)', 'argmax $x. (grower($x)) by hectares', 'lambda $x. $x == mara_feldwick & orchard($x)']) {
      expect(accepts(t), t).toBe(false);
    }
    // refused as prefixes: no well-kinded program continues them
    expect(viable('value: tonnes(')).toBe(false); // tonnes measures lots; no constant is a lot, no variable is in scope
    expect(viable('lambda $x. lot($x) & tonnes(')).toBe(true); // $x can be the lot
    expect(viable('lambda $x. grower($x) & tonnes(')).toBe(false); // $x is a grower now
    // $x of argmax must stay a kind some measure takes: villages have none, so $x cannot be the village
    expect(viable('argmax $x. (lives_in(mara_feldwick, oakmere')).toBe(true);
    expect(viable('argmax $x. (lives_in(mara_feldwick, $x')).toBe(false);
    expect(viable('argmax $x. (lives_in($x, oakmere)) by ')).toBe(true);
  });

  it('sampled trees are accepted; trees with names swapped are accepted exactly when they resolve', () => {
    const sampler = createSampler(g, { seed: 7, names, maxDepth: 7 });
    const rand = rng(11);
    let bad = 0;
    let good = 0;
    for (let i = 0; i < 300; i++) {
      const tree = sampler.next();
      const text = printTree(g, tree);
      expect(accepts(text), text).toBe(true);
      const m = mutate(tree, rand);
      const mt = printTree(g, m);
      const issues = resolveTree(g, m, names);
      expect(accepts(mt), `${mt}: ${issues.map((x) => x.message).join('; ')}`).toBe(issues.length === 0);
      if (issues.length === 0) good++;
      else bad++;
    }
    // both sides of the equivalence were exercised
    expect(bad).toBeGreaterThan(30);
    expect(good).toBeGreaterThan(30);
  });

  it('the mask of every prefix of a sampled program keeps its next token (llama3, 128k)', () => {
    const v = vocabulary('llama3');
    const c = compileMasks(g, v).bind(names);
    const sampler = createSampler(g, { seed: 3, names, maxDepth: 6 });
    const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
    for (let i = 0; i < 25; i++) {
      const text = printTree(g, sampler.next());
      const ids = greedyTokens(v, text);
      let s = c.start();
      for (const id of ids) {
        c.writeAllowed(s, Infinity, mask);
        expect((mask[id >>> 5] >>> (id & 31)) & 1, `${JSON.stringify(text)} at ${JSON.stringify(v.text(id))}`).toBe(1);
        s = c.advance(s, id);
      }
      expect(c.isComplete(s)).toBe(true);
    }
  });
});

/** Longest-match tokens of `text` (any tokenization is a path the masks must allow). */
function greedyTokens(v: ReturnType<typeof vocabulary>, text: string): number[] {
  const b = enc.encode(text);
  const out: number[] = [];
  for (let pos = 0; pos < b.length; ) {
    let len = Math.min(b.length - pos, 24);
    for (; len > 0; len--) {
      const ids = v.idsOf(b.subarray(pos, pos + len));
      if (ids.length > 0) {
        out.push(ids[0]!);
        break;
      }
    }
    if (len === 0) throw new Error(`no token for byte ${b[pos]}`);
    pos += len;
  }
  return out;
}

function parseTree(text: string): Tree {
  // the resolver reads trees; the parser without resolution gives the tree the text denotes
  return parserNoResolve.parse(text, { names, resolve: false });
}
import { createParser } from '../../src/tree/index.ts';
const parserNoResolve = createParser(g);
