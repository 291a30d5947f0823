/**
 * Result building: the ohm semantics that turn a successful match into a JSON tree (operators,
 * constructors, fields, token values), recording where each token value sits for the check pass,
 * and the syntax error of a failed match in grammar terms ("expected ...").
 */
import type * as ohm from 'ohm-js';
import type { Constructor, Field, Span } from '../description/ir.ts';
import { isWordCode } from '../description/regex/index.ts';
import { spellingToken, type GrammarInfo } from './info.ts';
import { kindWords, lexemeToValue } from './lexeme.ts';
import { ParseError } from './parse-errors.ts';
import type { Generated } from './parse-generate.ts';
import type { Tree, TreeValue } from './validate.ts';

/** Where parsed token and name values sit in the source, for the located check pass. */
export type SpanTable = WeakMap<object, Map<string, Span | Span[]>>;

export function syntaxError(gen: Generated, file: string, text: string, m: ohm.MatchResult): ParseError {
  // ohm 17 has these on failed match results; its typings omit them
  const failed = m as unknown as { getRightmostFailurePosition(): number; getRightmostFailures(): { getText(): string }[] };
  let pos = failed.getRightmostFailurePosition();
  const seen = new Set<string>();
  const guarded = new Set<string>();
  for (const f of failed.getRightmostFailures()) {
    const t = f.getText();
    if (gen.terms.has(t)) seen.add(t);
    for (const x of gen.guardItems.get(t) ?? []) guarded.add(x);
  }
  for (const x of guarded) seen.add(x);
  // a failure after trailing whitespace is reported where the text ends
  const trimmed = text.trimEnd().length;
  if (pos > trimmed && /^\s*$/.test(text.slice(trimmed))) pos = trimmed;
  const items = [...seen].sort((a, b) => gen.termOrder.get(a)! - gen.termOrder.get(b)!).map((t) => gen.terms.get(t)!);
  const list = items.length <= 1 ? (items[0] ?? 'nothing') : `${items.slice(0, -1).join(', ')} or ${items[items.length - 1]}`;
  return new ParseError(file, text, { start: pos, end: pos + 1 }, `expected ${list}`, items);
}

export interface Ctx {
  readonly file: string;
  readonly text: string;
  readonly spans: SpanTable;
}

interface Wrapper {
  readonly ctorName: string;
  readonly children: Wrapper[];
  readonly sourceString: string;
  readonly source: { startIdx: number; endIdx: number };
  isIteration(): boolean;
  isTerminal(): boolean;
  tree(ctx: Ctx): TreeValue;
}

export function buildSemantics(info: GrammarInfo, og: ohm.Grammar, mixedEnds: ReadonlySet<string>): ohm.Semantics {
  const g = info.grammar;
  const sem = og.createSemantics();
  // classify every generated rule once; the action below dispatches on a map lookup
  type Kind =
    | { k: 'op'; c: Constructor }
    | { k: 'ctor'; c: Constructor }
    | { k: 'paren' }
    | { k: 'field'; c: Constructor; f: Field }
    | { k: 'leaf' }
    | { k: 'pass' };
  const kinds = new Map<string, Kind>();
  for (const name of Object.keys(og.rules)) {
    let m: RegExpExecArray | null;
    if ((m = /^S\d+_(?:L\d+|A)_c(\d+)$/.exec(name)) !== null) {
      const c = g.constructors[Number(m[1])]!;
      kinds.set(name, c.operator === null ? { k: 'pass' } : { k: 'op', c });
    } else if (/^S\d+_A_paren$/.test(name)) kinds.set(name, { k: 'paren' });
    else if ((m = /^C(\d+)$/.exec(name)) !== null) kinds.set(name, { k: 'ctor', c: g.constructors[Number(m[1])]! });
    else if ((m = /^F(\d+)_(\d+)$/.exec(name)) !== null) {
      const c = g.constructors[Number(m[1])]!;
      kinds.set(name, { k: 'field', c, f: c.fields[Number(m[2])]! });
    } else if (/^(kw|tok|lex|nm|blk|fill|G)\d+$/.test(name)) kinds.set(name, { k: 'leaf' });
    else kinds.set(name, { k: 'pass' });
  }
  const build = (c: Constructor, operands: { left?: Wrapper; right?: Wrapper }, rest: Wrapper[], ctx: Ctx): Tree => {
    const collected: Wrapper[][] = c.fields.map(() => []);
    const collect = (w: Wrapper) => {
      if (w.isTerminal()) return;
      const kind = kinds.get(w.ctorName);
      if (kind !== undefined) {
        if (kind.k === 'field' && kind.c === c) {
          collected[kind.f.index]!.push(w);
          return;
        }
        if (kind.k === 'leaf') return;
      }
      for (const child of w.children) collect(child);
    };
    for (const w of rest) collect(w);
    const ops = info.operands.get(c.name);
    const out: Record<string, TreeValue> = { kind: c.name };
    const spans = new Map<string, Span | Span[]>();
    for (const f of c.fields) {
      if (ops !== undefined && (ops.left === f.name || ops.right === f.name)) {
        const w = ops.left === f.name ? operands.left! : operands.right!;
        out[f.name] = w.tree(ctx);
        continue;
      }
      const ws = collected[f.index]!;
      const values = ws.map((w) => w.tree(ctx));
      const spanOf = (w: Wrapper): Span => {
        const inner = w.children[0]!;
        return { start: inner.source.startIdx, end: inner.source.endIdx };
      };
      if (f.type.kind !== 'sort') {
        spans.set(f.name, f.card === 'one' || f.card === 'optional' ? (ws[0] ? spanOf(ws[0]) : { start: 0, end: 0 }) : ws.map(spanOf));
      }
      out[f.name] = f.card === 'one' ? values[0]! : f.card === 'optional' ? (values[0] ?? null) : values;
    }
    ctx.spans.set(out, spans);
    return out as Tree;
  };
  const actions = {
    _nonterminal(this: Wrapper, ...children: Wrapper[]): TreeValue {
      const ctx = (this as unknown as { args: { ctx: Ctx } }).args.ctx;
      const kind = kinds.get(this.ctorName) ?? { k: 'pass' };
      switch (kind.k) {
        case 'op': {
          const ops = info.operands.get(kind.c.name)!;
          const left = ops.left !== null ? children[0] : undefined;
          const right = ops.right !== null ? children[children.length - 1] : undefined;
          const rest = children.slice(left ? 1 : 0, right ? children.length - 1 : children.length);
          return build(kind.c, { left, right }, rest, ctx);
        }
        case 'paren':
          return children[1]!.tree(ctx);
        case 'ctor':
          return build(kind.c, {}, children, ctx);
        case 'field': {
          const f = kind.f;
          const child = children[0]!;
          if (f.type.kind === 'sort') return child.tree(ctx);
          const tok = spellingToken(info, f.type)!.token;
          const end = child.source.endIdx;
          if (mixedEnds.has(tok.name) && isWordCode(ctx.text.charCodeAt(end - 1)) && isWordCode(ctx.text.charCodeAt(end))) {
            const what = f.type.kind === 'names' ? f.type.name : tok.name;
            throw new ParseError(ctx.file, ctx.text, { start: end, end: end + 1 }, `expected a space after ${what} ${child.sourceString} (a word character may not follow it)`);
          }
          if (f.type.kind === 'names') return child.sourceString;
          const v = lexemeToValue(tok.value, child.sourceString);
          if (v === null) {
            throw new ParseError(ctx.file, ctx.text, { start: child.source.startIdx, end: child.source.endIdx }, `${tok.name} ${child.sourceString} is not ${kindWords(tok.value)} value (out of range)`);
          }
          return v;
        }
        default:
          // Start, S<i>, S<i>_L<k>, S<i>_A and their `next` cases: the first child carries the tree
          return children[0]!.tree(ctx);
      }
    },
  };
  sem.addOperation<TreeValue>('tree(ctx)', actions as unknown as ohm.ActionDict<TreeValue>);
  return sem;
}
