/**
 * The logical-form executor: evaluates a tree of the `lf` grammar in a fact base (closed world,
 * finite domain).
 *
 * Denotations:
 * - constants → entities; classes → sets; relations → sets of pairs; measures → partial numeric
 *   functions (using a measure where it is undefined is a runtime error naming the entity);
 * - `lambda $x. F` → the set of entities e with F[$x := e] true: `{ type: "set", members }`
 *   (sorted names);
 * - `argmax $x. (F) by m` / `argmin` → every entity satisfying F that reaches the largest / smallest
 *   m: `{ type: "best", members }` (more than one only on a tie; empty when F holds for none);
 * - `value: N` → `{ type: "number", value }`; `holds: F` → `{ type: "truth", value }`;
 * - exists / forall / count / sum range over the whole domain; & | -> short-circuit left to right;
 *   `sum $x. (F) of m` over no entity is 0.
 *
 * Kinds: before evaluating, the program's kinds are checked against the fact base's (kindProblem):
 * `hectares(mara_feldwick)` or `owns($x, $y) & grower($y)` is a kind error, reported as such
 * instead of evaluating to an undefined measure or an empty answer.
 *
 * Bounded work: every node visited counts one step; past `stepLimit` (default 1,000,000) the
 * evaluation stops with an error. Nested binders cost up to |domain|^depth steps; a binder whose
 * body starts with a class test of its variable (`exists $y. (orchard($y) & …)`) ranges over that
 * class only, which gives the same answer (see guardClass) — so the dataset's questions stay far
 * below the limit while unguarded nesting three deep over ~200 entities hits it, as intended.
 * Cost per step is a Map lookup at most; no allocation per step except variable binding.
 */
import { jsonDepthProblem, MAX_JSON_DEPTH, tooDeepMessage } from '../util/depth.ts';
import { join } from 'node:path';
import { loadGrammar } from '../description/index.ts';
import type { Grammar, NameBindings } from '../description/ir.ts';
import { resolveTree, validateTree, type Tree as TreeNode } from '../tree/index.ts';
import { PACKAGE_ROOT } from '../util/package.ts';
import { factNames, type FactBase } from './facts.ts';
import type { ExecContext, ExecResult, ExecuteFn, Tree } from './types.ts';

export type LfAnswer =
  | { readonly type: 'set'; readonly members: readonly string[] }
  | { readonly type: 'best'; readonly members: readonly string[] }
  | { readonly type: 'number'; readonly value: number }
  | { readonly type: 'truth'; readonly value: boolean };

export interface LfOptions {
  readonly stepLimit?: number;
  /**
   * check the program's kinds against the fact base before evaluating (default true): a class,
   * relation or measure applied to an entity of another kind is an error, never a silent `false`
   * or an undefined measure (the rules of grammars/lf/lf.twg, checked by tree/resolve.ts)
   */
  readonly checkKinds?: boolean;
  /** range a binder over the class its body starts with (default true; same answers, fewer steps) */
  readonly rangeByClass?: boolean;
}

export const DEFAULT_STEP_LIMIT = 1_000_000;

class LfError extends Error {
  constructor(message: string, readonly path: string) {
    super(message);
  }
}

type Node = { readonly kind: string; readonly [field: string]: unknown };

/** Evaluates one logical form; never throws for a bad program. */
export function evaluateLf(facts: FactBase, tree: Tree, options: LfOptions = {}): ExecResult {
  // the evaluator recurses once per level: deeper trees are refused first (src/util/depth.ts)
  const deep = jsonDepthProblem(tree, MAX_JSON_DEPTH);
  if (deep !== null) return { ok: false, error: `${tooDeepMessage(MAX_JSON_DEPTH)} (at ${deep})` };
  if (options.checkKinds ?? true) {
    const problem = kindProblem(facts, tree);
    if (problem !== null) return { ok: false, error: problem };
  }
  const ev = new Evaluator(facts, options.stepLimit ?? DEFAULT_STEP_LIMIT, options.rangeByClass ?? true);
  try {
    return { ok: true, value: ev.query(tree) };
  } catch (err) {
    if (err instanceof LfError) return { ok: false, error: err.path ? `${err.message} (at ${err.path})` : err.message };
    throw err;
  }
}

let lfGrammar: Grammar | null = null;
const namesOf = new WeakMap<FactBase, NameBindings>();

/**
 * The first kind disagreement of a well-formed logical form under the fact base's kinds, worded
 * `kind error: … (at $.path)`; null when the kinds agree, when the fact base has no kinds, or when
 * the tree is not a well-formed lf tree (the evaluator then reports what is wrong).
 */
export function kindProblem(facts: FactBase, tree: Tree): string | null {
  if (facts.kinds.kinds.length === 0) return null;
  lfGrammar ??= loadGrammar(join(PACKAGE_ROOT, 'grammars', 'lf', 'lf.twg'));
  let names = namesOf.get(facts);
  if (names === undefined) namesOf.set(facts, (names = factNames(facts)));
  if (validateTree(lfGrammar, tree, { resolve: false }) !== null) return null;
  const issue = resolveTree(lfGrammar, tree as unknown as TreeNode, names).find((i) => i.code === 'kind');
  return issue === undefined ? null : `kind error: ${issue.message} (at ${issue.path})`;
}

/** An executor (see types.ts) over a fixed fact base. */
export function lfExecutor(facts: FactBase, options: LfOptions = {}): ExecuteFn {
  return async (tree: Tree, _context: ExecContext) => evaluateLf(facts, tree, options);
}

class Evaluator {
  private steps = 0;
  private readonly env = new Map<string, number>();
  private readonly path: string[] = ['$'];
  private readonly n: number;

  constructor(private readonly facts: FactBase, private readonly limit: number, private readonly guards: boolean) {
    this.n = facts.entities.length;
  }

  private fail(message: string): never {
    throw new LfError(message, this.path.join(''));
  }

  private step(): void {
    if (++this.steps > this.limit) throw new LfError(`evaluation stopped after ${this.limit} steps (step limit)`, '');
  }

  private child<T>(field: string, node: unknown, f: (node: Node) => T): T {
    this.path.push(`.${field}`);
    if (node === null || typeof node !== 'object' || typeof (node as Node).kind !== 'string') {
      this.fail('expected a tree node with a "kind"');
    }
    const r = f(node as Node);
    this.path.pop();
    return r;
  }

  /**
   * Runs `body` with the node's variable bound to each entity in turn, stopping at the first
   * non-undefined result. The range is the whole domain, except where the answer cannot depend on
   * entities outside a class (`guard`): see `guardClass`.
   */
  private bind<T>(node: Node, body: (id: number) => T | undefined): T | undefined {
    const name = node.var;
    if (typeof name !== 'string') {
      this.path.push('.var');
      this.fail('expected a variable name');
    }
    const guard = !this.guards ? null : guardClass(node.kind === 'forall' ? impliesLeft(node.body) : node.body, name);
    const range = guard === null ? null : this.facts.classMembers.get(guard) ?? null;
    const saved = this.env.get(name);
    try {
      const count = range === null ? this.n : range.length;
      for (let i = 0; i < count; i++) {
        const e = range === null ? i : range[i];
        this.env.set(name, e);
        const r = body(e);
        if (r !== undefined) return r;
      }
      return undefined;
    } finally {
      if (saved === undefined) this.env.delete(name);
      else this.env.set(name, saved);
    }
  }

  query(node: Node): LfAnswer {
    this.step();
    switch (node.kind) {
      case 'lambda': {
        const members: string[] = [];
        this.bind(node, (e) => {
          if (this.child('body', node.body, (b) => this.formula(b))) members.push(this.facts.entities[e]);
          return undefined;
        });
        return { type: 'set', members };
      }
      case 'argmax':
      case 'argmin': {
        const values = this.measureTable(node.by, 'by');
        const sign = node.kind === 'argmax' ? 1 : -1;
        let best = -Infinity;
        let members: string[] = [];
        this.bind(node, (e) => {
          if (!this.child('body', node.body, (b) => this.formula(b))) return undefined;
          const v = values[e];
          if (Number.isNaN(v)) {
            this.path.push('.by');
            this.fail(`measure ${String(node.by)} is not defined for ${this.facts.entities[e]}`);
          }
          const s = sign * v;
          if (s > best) {
            best = s;
            members = [this.facts.entities[e]];
          } else if (s === best) members.push(this.facts.entities[e]);
          return undefined;
        });
        return { type: 'best', members };
      }
      case 'value':
        return { type: 'number', value: this.child('expr', node.expr, (x) => this.number(x)) };
      case 'truth':
        return { type: 'truth', value: this.child('claim', node.claim, (x) => this.formula(x)) };
      default:
        return this.fail(`a query must be lambda, argmax, argmin, value or holds, not "${node.kind}"`);
    }
  }

  formula(node: Node): boolean {
    this.step();
    switch (node.kind) {
      case 'and':
        return this.child('left', node.left, (x) => this.formula(x)) && this.child('right', node.right, (x) => this.formula(x));
      case 'or':
        return this.child('left', node.left, (x) => this.formula(x)) || this.child('right', node.right, (x) => this.formula(x));
      case 'implies':
        return !this.child('left', node.left, (x) => this.formula(x)) || this.child('right', node.right, (x) => this.formula(x));
      case 'not':
        return !this.child('operand', node.operand, (x) => this.formula(x));
      case 'exists':
        return this.bind(node, () => (this.child('body', node.body, (b) => this.formula(b)) ? true : undefined)) ?? false;
      case 'forall':
        return this.bind(node, () => (this.child('body', node.body, (b) => this.formula(b)) ? undefined : false)) ?? true;
      case 'is': {
        const bits = this.facts.classes.get(node.class as string);
        if (!bits) {
          this.path.push('.class');
          this.fail(`unknown class ${String(node.class)}`);
        }
        return bits[this.child('arg', node.arg, (x) => this.term(x))] === 1;
      }
      case 'rel': {
        const pairs = this.facts.relations.get(node.rel as string);
        if (!pairs) {
          this.path.push('.rel');
          this.fail(`unknown relation ${String(node.rel)}`);
        }
        const s = this.child('subject', node.subject, (x) => this.term(x));
        const o = this.child('object', node.object, (x) => this.term(x));
        return pairs.has(s * this.n + o);
      }
      case 'equal':
        return this.child('left', node.left, (x) => this.term(x)) === this.child('right', node.right, (x) => this.term(x));
      case 'compare': {
        const l = this.child('left', node.left, (x) => this.number(x));
        const r = this.child('right', node.right, (x) => this.number(x));
        const op = (node.op as Node | null)?.kind;
        switch (op) {
          case 'lt': return l < r;
          case 'le': return l <= r;
          case 'gt': return l > r;
          case 'ge': return l >= r;
          case 'eq': return l === r;
          default:
            this.path.push('.op');
            return this.fail(`unknown comparison "${String(op)}"`);
        }
      }
      default:
        return this.fail(`expected a formula, not "${node.kind}"`);
    }
  }

  term(node: Node): number {
    this.step();
    if (node.kind === 'var') {
      const e = this.env.get(node.name as string);
      if (e === undefined) {
        this.path.push('.name');
        this.fail(`unbound variable ${String(node.name)}`);
      }
      return e;
    }
    if (node.kind === 'const') {
      const e = this.facts.entityId.get(node.name as string);
      if (e === undefined) {
        this.path.push('.name');
        this.fail(`unknown entity ${String(node.name)}`);
      }
      return e;
    }
    return this.fail(`expected a term, not "${node.kind}"`);
  }

  private measureTable(name: unknown, field: string): Float64Array {
    const values = this.facts.measures.get(name as string);
    if (!values) {
      this.path.push(`.${field}`);
      this.fail(`unknown measure ${String(name)}`);
    }
    return values;
  }

  number(node: Node): number {
    this.step();
    switch (node.kind) {
      case 'sum':
        return this.child('left', node.left, (x) => this.number(x)) + this.child('right', node.right, (x) => this.number(x));
      case 'diff':
        return this.child('left', node.left, (x) => this.number(x)) - this.child('right', node.right, (x) => this.number(x));
      case 'literal': {
        const v = node.value;
        if (typeof v !== 'number' || !Number.isFinite(v)) {
          this.path.push('.value');
          this.fail('expected a finite number');
        }
        return v;
      }
      case 'measure': {
        const values = this.measureTable(node.fn, 'fn');
        const e = this.child('arg', node.arg, (x) => this.term(x));
        const v = values[e];
        if (Number.isNaN(v)) {
          this.path.push('.fn');
          this.fail(`measure ${String(node.fn)} is not defined for ${this.facts.entities[e]}`);
        }
        return v;
      }
      case 'count': {
        let c = 0;
        this.bind(node, () => {
          if (this.child('body', node.body, (b) => this.formula(b))) c++;
          return undefined;
        });
        return c;
      }
      case 'total': {
        const values = this.measureTable(node.fn, 'fn');
        let s = 0;
        this.bind(node, (e) => {
          if (!this.child('body', node.body, (b) => this.formula(b))) return undefined;
          const v = values[e];
          if (Number.isNaN(v)) {
            this.path.push('.fn');
            this.fail(`measure ${String(node.fn)} is not defined for ${this.facts.entities[e]}`);
          }
          s += v;
          return undefined;
        });
        return s;
      }
      default:
        return this.fail(`expected a number, not "${node.kind}"`);
    }
  }
}

/**
 * The class C when `formula` is a conjunction whose leftmost conjunct is `C(v)`: then the formula
 * is false for every entity outside C, so a binder of `v` over it (lambda, exists, count, sum,
 * argmax/argmin) may range over C alone with the same result. For `forall v. (F -> G)` the same
 * holds of F (outside C the implication is true). An unknown class gives null (the full domain is
 * used and the evaluation reports the class where it meets it).
 */
function guardClass(formula: unknown, v: string): string | null {
  let f = formula as Node | null;
  while (f !== null && typeof f === 'object' && f.kind === 'and') f = f.left as Node | null;
  if (f === null || typeof f !== 'object' || f.kind !== 'is') return null;
  const arg = f.arg as Node | null;
  return arg !== null && typeof arg === 'object' && arg.kind === 'var' && arg.name === v && typeof f.class === 'string' ? f.class : null;
}

function impliesLeft(formula: unknown): unknown {
  const f = formula as Node | null;
  return f !== null && typeof f === 'object' && f.kind === 'implies' ? f.left : null;
}
