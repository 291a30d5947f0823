/**
 * Grammar IR → the concrete grammar as a recursive transition network (RTN) over terminals.
 *
 * Every nonterminal is a small NFA whose edges read a terminal, call another nonterminal, or are
 * empty. Nonterminals: one per constructor that is not an operator (its layout template, in
 * order), one per precedence level of each sort with operators or parens, and one per sort
 * (the whole-expression entry). Left recursion of infix/postfix operators becomes a loop, so the
 * network has no left recursion (checked when the closures are computed).
 *
 * Terminals (the lexical layer, each a byte automaton):
 * - `lit`: a literal text of a layout (keyword, punctuation, parens), or a declared blank placed by
 *   a layout or separator (`blank Ws = " \t"`; named `" Ws"` with a leading space, which no
 *   literal text has; its DFA is the run `[ \t]+`);
 * - `class`: a token class (regex DFA; `reserved` classes minus every keyword);
 * - `names`: a member of an open name set (a trie built when names are bound);
 * - `newvar`: a token class lexeme that introduces a variable (`name: new Var`);
 * - `boundvar`: a lexeme that must equal a variable in scope (`name: bound Var`).
 *
 * Precedence levels of a sort (ascending precedence p1 < … < pk), level i for operators of
 * precedence p_i, level k+1 the atoms (non-operator constructors and `OPEN expr CLOSE`):
 *   L_i → PRE_i L_i                              (prefix operators; operand at the same level)
 *       | L_{i+1} ( INL_i L_{i+1} | POST_i )*    (left-associative infix, postfix)
 *                 [ INR_i L_i | INN_i L_{i+1} ]   (right- / non-associative infix)
 * which accepts exactly the minimal parenthesisation a precedence printer emits (and any extra
 * parens). A field of a sort outside an operator operand position refers to L_1 (a whole term).
 *
 * Invariants: node ids are dense; `nodeNt[n]` is n's nonterminal; each nonterminal has one start
 * and one final node; edges are immutable after `buildRtn` returns.
 */
import type { BlankUse, Constructor, Field, Grammar, LayoutItem, Sort } from '../description/ir.ts';
import { literalDfa, type ByteDfa } from './regex.ts';
import { lineColumn } from '../util/source.ts';
import { sourceText } from '../description/sources.ts';

export const EDGE_EPS = 0;
export const EDGE_TERM = 1;
export const EDGE_CALL = 2;

export type TerminalKind = 'lit' | 'class' | 'names' | 'newvar' | 'boundvar';

export interface Terminal {
  readonly index: number;
  readonly kind: TerminalKind;
  /** lit: the text; class/newvar/boundvar: the token class name; names: the set name */
  readonly name: string;
  /** lit, class, newvar: the lexeme DFA; names/boundvar: the class DFA members must match */
  readonly dfa: ByteDfa;
  /** token class index (class/newvar/boundvar/names: the spelling class), -1 for lit */
  readonly tokenClass: number;
  /** name set index for `names`, else -1 */
  readonly nameSet: number;
}

export interface Nonterminal {
  readonly name: string;
  readonly start: number;
  readonly final: number;
}

export interface Rtn {
  readonly terminals: readonly Terminal[];
  readonly nts: readonly Nonterminal[];
  /** per node: nonterminal id */
  readonly nodeNt: Int32Array;
  /** CSR edges: edges of node n are [edgeStart[n], edgeStart[n+1]) */
  readonly edgeStart: Int32Array;
  readonly edgeKind: Uint8Array;
  /** terminal index (TERM) or nonterminal id (CALL); 0 for EPS */
  readonly edgeArg: Int32Array;
  readonly edgeTo: Int32Array;
  /** the start sort's entry nonterminal */
  readonly startNt: number;
  /** the grammar's space characters as a byte table (1 = skippable) */
  readonly space: Uint8Array;
  /**
   * per node: the field whose value the terminal edge into this node reads, as
   * `ctor.index * FIELD_STRIDE + field.index`, or -1 (literals, nodes no terminal edge enters).
   * A terminal edge's target node is created for that edge alone, so the node names the edge.
   */
  readonly nodeField: Int32Array;
  /** per nonterminal: the constructor whose layout it is, or -1 (sorts, precedence levels) */
  readonly ntCtor: Int32Array;
  /**
   * per node: the sort-typed field whose value the call edge into this node reads (the node is
   * the call's return node, created for that edge alone), encoded as in `nodeField`, or -1
   * (operator operands, nodes no such call edge enters)
   */
  readonly callField: Int32Array;
}

/** Fields per constructor in `Rtn.nodeField`'s encoding. */
export const FIELD_STRIDE = 1024;

/** A compile error located in the description file. */
export class AutomatonError extends Error {}

function located(g: Grammar, span: { start: number }, msg: string): AutomatonError {
  // the text the grammar was compiled from; never g.file from disk (for a description checked
  // through the server it is a label from the request, not a file to read)
  const text = sourceText(g);
  let where = g.file;
  if (text !== undefined) {
    const { line, column } = lineColumn(text, span.start);
    where = `${g.file}:${line}:${column}`;
  }
  return new AutomatonError(`${where}: error: ${msg}`);
}

const utf8 = new TextEncoder();

interface Frag {
  s: number;
  e: number;
}

class Builder {
  nodeNt: number[] = [];
  edges: Array<Array<[number, number, number]>> = []; // [kind, arg, to]
  nts: Nonterminal[] = [];
  terminals: Terminal[] = [];
  termKey = new Map<string, number>();
  curNt = -1;
  nodeField = new Map<number, number>();
  callField = new Map<number, number>();
  ntCtor = new Map<number, number>();

  node(): number {
    this.nodeNt.push(this.curNt);
    this.edges.push([]);
    return this.nodeNt.length - 1;
  }
  edge(from: number, kind: number, arg: number, to: number): void {
    this.edges[from].push([kind, arg, to]);
  }
  /** filler terminals: each may be read any number of times before every terminal */
  fillers: number[] = [];
  term(t: number): Frag {
    const s = this.node();
    const e = this.node();
    for (const f of this.fillers) this.edge(s, EDGE_TERM, f, s);
    this.edge(s, EDGE_TERM, t, e);
    return { s, e };
  }
  call(nt: number): Frag {
    const s = this.node();
    const e = this.node();
    this.edge(s, EDGE_CALL, nt, e);
    return { s, e };
  }
  seq(parts: Frag[]): Frag {
    if (parts.length === 0) {
      const n = this.node();
      return { s: n, e: n };
    }
    for (let i = 1; i < parts.length; i++) this.edge(parts[i - 1].e, EDGE_EPS, 0, parts[i].s);
    return { s: parts[0].s, e: parts[parts.length - 1].e };
  }
  opt(f: Frag): Frag {
    const s = this.node();
    const e = this.node();
    this.edge(s, EDGE_EPS, 0, f.s);
    this.edge(s, EDGE_EPS, 0, e);
    this.edge(f.e, EDGE_EPS, 0, e);
    return { s, e };
  }
  /** element (sep element)* ; `make` builds a fresh copy of the element; `sep` a terminal or a fresh separator fragment */
  list(make: () => Frag, sep: number | (() => Frag) | null): Frag {
    const first = make();
    const loop = this.node();
    this.edge(first.e, EDGE_EPS, 0, loop);
    const again = make();
    if (sep !== null) {
      const sp = typeof sep === 'number' ? this.term(sep) : sep();
      this.edge(loop, EDGE_EPS, 0, sp.s);
      this.edge(sp.e, EDGE_EPS, 0, again.s);
    } else {
      this.edge(loop, EDGE_EPS, 0, again.s);
    }
    this.edge(again.e, EDGE_EPS, 0, loop);
    return { s: first.s, e: loop };
  }
  /** Declares a nonterminal; its body is filled by `body` (called with curNt set). */
  declare(name: string): number {
    const id = this.nts.length;
    this.nts.push({ name, start: -1, final: -1 });
    return id;
  }
  define(id: number, body: () => Frag): void {
    const saved = this.curNt;
    this.curNt = id;
    const start = this.node();
    const final = this.node();
    const f = body();
    this.edge(start, EDGE_EPS, 0, f.s);
    this.edge(f.e, EDGE_EPS, 0, final);
    this.nts[id] = { name: this.nts[id].name, start, final };
    this.curNt = saved;
  }
}

/** The DFA of every token class of `g` (`reserved` classes minus the keywords), by class index. */
export function classDfas(g: Grammar): ByteDfa[] {
  return g.tokens.map((t) => t.regex.dfa);
}

/**
 * Builds the RTN of `g`. Throws AutomatonError (file:line:col) for unsupported regexes.
 * `dfas`: the class DFAs when already compiled (the mask cache stores them).
 */
export function buildRtn(g: Grammar, dfas?: readonly ByteDfa[]): Rtn {
  const b = new Builder();
  const classDfa = dfas ?? classDfas(g);
  for (const t of g.tokens) {
    const d = classDfa[t.index];
    if (d.start === 0) throw located(g, t.span, `token class ${t.name} has no lexeme (after removing the keywords)`);
    for (let c = 0; c < 256; c++) {
      if (g.space.includes(String.fromCharCode(c)) && d.trans[d.start * 256 + c] !== 0) {
        throw located(g, t.span, `token class ${t.name} may begin with the space character ${JSON.stringify(String.fromCharCode(c))}; expected lexemes that start with a non-space character`);
      }
    }
  }
  const tokenIndex = new Map(g.tokens.map((t) => [t.name, t.index]));
  const setIndex = new Map(g.nameSets.map((s) => [s.name, s.index]));
  const terminal = (kind: TerminalKind, name: string): number => {
    const key = `${kind}:${name}`;
    const known = b.termKey.get(key);
    if (known !== undefined) return known;
    const index = b.terminals.length;
    let dfa: ByteDfa;
    let tokenClass = -1;
    let nameSet = -1;
    if (kind === 'lit' && name.startsWith('\n')) dfa = g.fillers[Number(name.slice(7))]!.regex.dfa;
    else if (kind === 'lit' && name.startsWith(' ')) dfa = g.blanks.find((x) => x.name === name.slice(1))!.regex.dfa;
    else if (kind === 'lit') dfa = literalDfa(utf8.encode(name));
    else if (kind === 'names') {
      nameSet = setIndex.get(name)!;
      tokenClass = tokenIndex.get(g.nameSets[nameSet].token)!;
      dfa = classDfa[tokenClass];
    } else {
      tokenClass = tokenIndex.get(name)!;
      dfa = classDfa[tokenClass];
    }
    b.terminals.push({ index, kind, name, dfa, tokenClass, nameSet });
    b.termKey.set(key, index);
    return index;
  };

  // filler i is the `lit` terminal named "\nfiller<i>" (no literal text has a line break)
  b.fillers = g.fillers.map((f) => terminal('lit', `\nfiller${f.index}`));
  const ctorByName = new Map(g.constructors.map((c) => [c.name, c]));
  const sortByName = new Map(g.sorts.map((s) => [s.name, s]));
  // nonterminal ids: sort entry, levels, constructors
  const sortEntry = new Map<string, number>();
  const ctorNt = new Map<string, number>();
  for (const s of g.sorts) sortEntry.set(s.name, b.declare(s.name));
  for (const c of g.constructors) {
    if (c.operator) continue;
    const nt = b.declare(`${c.sort}.${c.name}`);
    ctorNt.set(c.name, nt);
    b.ntCtor.set(nt, c.index);
  }

  /** One occurrence of a field's value. `operandNt` overrides the target for operand slots. */
  const symbol = (f: Field, operandNt: number | undefined): Frag => {
    if (operandNt !== undefined) return b.call(operandNt);
    switch (f.type.kind) {
      case 'sort':
        return b.call(sortEntry.get(f.type.name)!);
      case 'names':
        return b.term(terminal('names', f.type.name));
      case 'token':
        return b.term(terminal(f.scoping === 'binds' ? 'newvar' : f.scoping === 'bound' ? 'boundvar' : 'class', f.type.name));
    }
  };
  const slot = (c: Constructor, item: Extract<LayoutItem, { kind: 'slot' }>, present: boolean, operands: Map<string, number>): Frag => {
    const f = c.fields.find((x) => x.name === item.field)!;
    const op = operands.get(f.name);
    const make = () => {
      const frag = symbol(f, op);
      if (op === undefined) (f.type.kind === 'sort' ? b.callField : b.nodeField).set(frag.e, c.index * FIELD_STRIDE + f.index);
      return frag;
    };
    const blank = (u: BlankUse | null | undefined): Frag[] =>
      u === null || u === undefined ? [] : [u.optional ? b.opt(b.term(terminal('lit', ' ' + u.blank))) : b.term(terminal('lit', ' ' + u.blank))];
    const sep =
      item.sep === null ? null
      : item.sepBlanks === undefined ? terminal('lit', item.sep)
      : () => b.seq([...blank(item.sepBlanks!.before), b.term(terminal('lit', item.sep!)), ...blank(item.sepBlanks!.after)]);
    switch (f.card) {
      case 'one':
        return make();
      case 'optional':
        return present ? make() : b.opt(make());
      case 'nonempty':
        return b.list(make, sep);
      case 'list':
        return present ? b.list(make, sep) : b.opt(b.list(make, sep));
    }
  };
  const items = (c: Constructor, list: readonly LayoutItem[], operands: Map<string, number>, present = false): Frag => {
    const parts: Frag[] = [];
    for (const it of list) {
      if (it.kind === 'text') parts.push(b.term(terminal('lit', it.text)));
      else if (it.kind === 'blank') {
        const t = b.term(terminal('lit', ' ' + it.blank));
        parts.push(it.optional ? b.opt(t) : t);
      } else if (it.kind === 'slot') parts.push(slot(c, it, present, operands));
      else parts.push(b.opt(items(c, it.items, operands, true)));
    }
    return b.seq(parts);
  };
  const noOperands = new Map<string, number>();

  for (const c of g.constructors) {
    if (c.operator) continue;
    b.define(ctorNt.get(c.name)!, () => items(c, c.layout, noOperands));
  }

  for (const s of g.sorts) {
    const ctors = s.constructors.map((n) => ctorByName.get(n)!);
    const ops = ctors.filter((c) => c.operator);
    const atoms = ctors.filter((c) => !c.operator);
    if (ops.length === 0 && !s.parens) {
      b.define(sortEntry.get(s.name)!, () => alt(b, atoms.map((c) => b.call(ctorNt.get(c.name)!))));
      continue;
    }
    const precs = [...new Set(ops.map((c) => c.operator!.precedence))].sort((x, y) => x - y);
    const levels = precs.map((p) => b.declare(`${s.name}@${p}`));
    const atomNt = b.declare(`${s.name}@atom`);
    const levelNt = (i: number) => (i < levels.length ? levels[i] : atomNt);
    b.define(sortEntry.get(s.name)!, () => b.call(levelNt(0)));
    b.define(atomNt, () => {
      const alts = atoms.map((c) => b.call(ctorNt.get(c.name)!));
      if (s.parens) alts.push(b.seq([b.term(terminal('lit', s.parens.open)), b.call(levelNt(0)), b.term(terminal('lit', s.parens.close))]));
      return alt(b, alts);
    });
    precs.forEach((p, i) => {
      const here = ops.filter((c) => c.operator!.precedence === p);
      b.define(levels[i], () => operatorLevel(b, s, here, levelNt(i), levelNt(i + 1), items));
    });
  }

  // filler after the last token: a loop on the start sort's final node
  const startFinal = b.nts[sortEntry.get(g.start)!]?.final;
  if (startFinal !== undefined) for (const f of b.fillers) b.edges[startFinal].push([EDGE_TERM, f, startFinal]);
  const nodeCount = b.nodeNt.length;
  const edgeStart = new Int32Array(nodeCount + 1);
  let ne = 0;
  for (let n = 0; n < nodeCount; n++) {
    edgeStart[n] = ne;
    ne += b.edges[n].length;
  }
  edgeStart[nodeCount] = ne;
  const edgeKind = new Uint8Array(ne);
  const edgeArg = new Int32Array(ne);
  const edgeTo = new Int32Array(ne);
  for (let n = 0, k = 0; n < nodeCount; n++) for (const [kind, arg, to] of b.edges[n]) {
    edgeKind[k] = kind;
    edgeArg[k] = arg;
    edgeTo[k] = to;
    k++;
  }
  const space = new Uint8Array(256);
  for (const ch of g.space) {
    const code = ch.codePointAt(0)!;
    if (code < 128) space[code] = 1;
  }
  const nodeField = new Int32Array(nodeCount).fill(-1);
  for (const [n, f] of b.nodeField) nodeField[n] = f;
  const callField = new Int32Array(nodeCount).fill(-1);
  for (const [n, f] of b.callField) callField[n] = f;
  const ntCtor = new Int32Array(b.nts.length).fill(-1);
  for (const [nt, c] of b.ntCtor) ntCtor[nt] = c;
  if (!sortByName.has(g.start)) throw new AutomatonError(`${g.file}: error: start sort ${g.start} is not a sort`);
  return {
    terminals: b.terminals,
    nts: b.nts,
    nodeNt: Int32Array.from(b.nodeNt),
    edgeStart,
    edgeKind,
    edgeArg,
    edgeTo,
    startNt: sortEntry.get(g.start)!,
    space,
    nodeField,
    ntCtor,
    callField,
  };
}

function alt(b: Builder, alts: Frag[]): Frag {
  const s = b.node();
  const e = b.node();
  for (const f of alts) {
    b.edge(s, EDGE_EPS, 0, f.s);
    b.edge(f.e, EDGE_EPS, 0, e);
  }
  return { s, e };
}

/** Slots that are operands: the first and/or last layout item naming a field of the same sort. */
function operandSlots(c: Constructor): { first: string | null; last: string | null } {
  const isOperand = (it: LayoutItem | undefined): string | null => {
    if (!it || it.kind !== 'slot') return null;
    const f = c.fields.find((x) => x.name === it.field)!;
    return f.type.kind === 'sort' && f.type.name === c.sort && f.card === 'one' ? f.name : null;
  };
  return { first: isOperand(c.layout[0]), last: isOperand(c.layout[c.layout.length - 1]) };
}

function operatorLevel(
  b: Builder,
  s: Sort,
  ops: Constructor[],
  self: number,
  tighter: number,
  items: (c: Constructor, list: readonly LayoutItem[], operands: Map<string, number>) => Frag,
): Frag {
  const start = b.node();
  const end = b.node();
  const loop = b.node();
  // prefix: PRE L_i
  for (const c of ops.filter((x) => x.operator!.fixity === 'prefix')) {
    const { last } = operandSlots(c);
    const f = items(c, c.layout, new Map(last ? [[last, self]] : []));
    b.edge(start, EDGE_EPS, 0, f.s);
    b.edge(f.e, EDGE_EPS, 0, end);
  }
  const first = b.call(tighter);
  b.edge(start, EDGE_EPS, 0, first.s);
  b.edge(first.e, EDGE_EPS, 0, loop);
  b.edge(loop, EDGE_EPS, 0, end);
  for (const c of ops) {
    const { fixity, assoc } = c.operator!;
    if (fixity === 'prefix') continue;
    const { first: lhs, last: rhs } = operandSlots(c);
    // the layout without its first operand (consumed by the loop's left side)
    const rest = lhs ? c.layout.slice(1) : c.layout;
    let target = loop;
    const operands = new Map<string, number>();
    if (fixity === 'infix' && rhs) {
      if (assoc === 'left') operands.set(rhs, tighter);
      else if (assoc === 'right') {
        operands.set(rhs, self);
        target = end;
      } else {
        operands.set(rhs, tighter);
        target = end;
      }
    }
    const f = items(c, rest, operands);
    b.edge(loop, EDGE_EPS, 0, f.s);
    b.edge(f.e, EDGE_EPS, 0, target);
  }
  void s;
  return { s: start, e: end };
}

/** A next-terminal choice from a node: read `term`, land on `target` after pushing `push` (outermost first). */
export interface Option {
  readonly term: number;
  readonly target: number;
  readonly push: Int32Array;
}

/**
 * Static closures: for each node, the terminals readable next without returning from the node's
 * nonterminal (with the call frames to push), and whether the node can reach its final node by
 * empty moves (then the caller's continuation applies). Throws AutomatonError on left recursion.
 */
export function closures(rtn: Rtn, g: Grammar): { options: Option[][]; canPop: Uint8Array } {
  const n = rtn.nodeNt.length;
  const options: Option[][] = new Array(n);
  const canPop = new Uint8Array(n);
  const state = new Uint8Array(n); // 0 new, 1 in progress, 2 done
  const visit = (node: number): void => {
    if (state[node] === 2) return;
    if (state[node] === 1) {
      throw new AutomatonError(`${g.file}: error: left recursion through ${rtn.nts[rtn.nodeNt[node]].name}; expected every sort reached at the start of a layout to begin with a token first`);
    }
    state[node] = 1;
    const out: Option[] = [];
    const keys = new Set<string>();
    let pop = false;
    const seen = new Set<number>();
    const stack = [node];
    seen.add(node);
    while (stack.length) {
      const m = stack.pop()!;
      if (rtn.nts[rtn.nodeNt[m]].final === m) pop = true;
      for (let e = rtn.edgeStart[m]; e < rtn.edgeStart[m + 1]; e++) {
        const to = rtn.edgeTo[e];
        const kind = rtn.edgeKind[e];
        if (kind === EDGE_EPS) {
          if (!seen.has(to)) {
            seen.add(to);
            stack.push(to);
          }
        } else if (kind === EDGE_TERM) {
          const key = `${rtn.edgeArg[e]}:${to}:`;
          if (!keys.has(key)) {
            keys.add(key);
            out.push({ term: rtn.edgeArg[e], target: to, push: new Int32Array(0) });
          }
        } else {
          const callee = rtn.nts[rtn.edgeArg[e]].start;
          visit(callee);
          for (const o of options[callee]) {
            const push = new Int32Array(o.push.length + 1);
            push[0] = to;
            push.set(o.push, 1);
            const key = `${o.term}:${o.target}:${push.join(',')}`;
            if (!keys.has(key)) {
              keys.add(key);
              out.push({ term: o.term, target: o.target, push });
            }
          }
          if (canPop[callee] && !seen.has(to)) {
            seen.add(to);
            stack.push(to);
          }
        }
      }
    }
    options[node] = out;
    canPop[node] = pop ? 1 : 0;
    state[node] = 2;
  };
  for (let i = 0; i < n; i++) visit(i);
  return { options, canPop };
}
