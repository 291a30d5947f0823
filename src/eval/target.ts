/**
 * The shipped Scorer: parses outputs with the grammar's parser and bound names, classifies what
 * went wrong in the grammar's own terms, runs well-typed trees on an executor, and compares
 * answers.
 *
 * Failure categories (the taxonomy):
 * - `expected <items>`: the first character the grammar does not allow, with the sorts and
 *   terminals the parser expected there (its own message, e.g. `expected Formula or "("`);
 * - `truncated at max length`: decoding hit the length limit and the text is an unfinished prefix;
 * - `ended early, expected <items>`: the model stopped (end-of-sequence) before the program was complete;
 * - `unknown name` / `unbound variable` / `value out of range`: the text parses but fails the check
 *   pass (`detail` keeps the parser's message with the name);
 * - `runtime error: …` (added by the loop, run.ts) when the executor fails.
 *
 * Answer comparison: SQL results `{columns, rows}` compare rows (not column names), in order when
 * the gold query has ORDER BY and as multisets otherwise; numbers match within a relative 1e-9;
 * LF answers compare type and value (sets as sets); anything else by JSON equality.
 */
import type { Grammar, NameBindings } from '../description/ir.ts';
import type { ExecContext, ExecuteFn, Tree } from '../exec/types.ts';
import { createParser, ParseError } from '../tree/index.ts';
import type { Analysis, Scorer } from './run.ts';

export interface ScorerOptions {
  readonly grammar: Grammar;
  readonly names: NameBindings;
  readonly execute: ExecuteFn;
  readonly context?: ExecContext;
}

/** The message of a ParseError without its `file:line:col: ` prefix and excerpt. */
function bareMessage(err: ParseError): string {
  const first = err.message.split('\n')[0];
  const prefix = `${err.file}:${err.line}:${err.column}: `;
  return first.startsWith(prefix) ? first.slice(prefix.length) : first;
}

export function createScorer(opts: ScorerOptions): Scorer {
  const parser = createParser(opts.grammar);
  const context: ExecContext = { grammar: opts.grammar, ...opts.context };
  return {
    analyse(text: string, truncated: boolean): Analysis {
      let tree: Tree;
      try {
        tree = parser.parse(text, { file: '<output>', names: opts.names }) as Tree;
      } catch (err) {
        if (!(err instanceof ParseError)) throw err;
        const message = bareMessage(err);
        const syntax = err.expected.length > 0 || message.startsWith('expected ');
        if (!syntax) {
          const category = message.startsWith('unknown name') ? 'unknown name'
            : message.startsWith('unbound variable') ? 'unbound variable'
            : message.endsWith('(out of range)') ? 'value out of range'
            : message;
          return { valid: true, well_typed: false, tree: null, failure: { category, detail: message, offset: err.offset } };
        }
        const atEnd = err.offset >= text.trimEnd().length;
        const category = atEnd ? (truncated ? 'truncated at max length' : `ended early, ${message}`) : message;
        return { valid: false, well_typed: false, tree: null, failure: { category, detail: message, offset: err.offset } };
      }
      return { valid: true, well_typed: true, tree, failure: null };
    },
    execute(tree: Tree) {
      return opts.execute(tree, context);
    },
    sameAnswer(gold: unknown, got: unknown, goldTree: Tree): boolean {
      return sameAnswer(gold, got, goldTree);
    },
  };
}

function sameValue(a: unknown, b: unknown): boolean {
  if (typeof a === 'number' && typeof b === 'number') return a === b || Math.abs(a - b) <= 1e-9 * Math.max(1, Math.abs(a), Math.abs(b));
  if (a === b) return true;
  if (Array.isArray(a) && Array.isArray(b)) return a.length === b.length && a.every((x, i) => sameValue(x, b[i]));
  if (a && b && typeof a === 'object' && typeof b === 'object' && !Array.isArray(a) && !Array.isArray(b)) {
    const ka = Object.keys(a).sort();
    const kb = Object.keys(b).sort();
    return ka.length === kb.length && ka.every((k, i) => k === kb[i] && sameValue((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k]));
  }
  return false;
}

function rowKey(row: readonly unknown[]): string {
  // numbers rounded to 9 significant digits so tolerance-equal rows sort and match together
  return JSON.stringify(row.map((x) => (typeof x === 'number' ? Number(x.toPrecision(9)) : x)));
}

/** Answer equality (see the module comment). */
export function sameAnswer(gold: unknown, got: unknown, goldTree: Tree | null): boolean {
  const g = gold as { rows?: unknown; type?: unknown; members?: unknown } | null;
  const o = got as { rows?: unknown; type?: unknown; members?: unknown } | null;
  if (g && o && Array.isArray(g.rows) && Array.isArray(o.rows)) {
    const gr = g.rows as unknown[][];
    const or = o.rows as unknown[][];
    if (gr.length !== or.length) return false;
    const order = goldTree === null ? undefined : (goldTree as { readonly [k: string]: unknown }).order;
    const ordered = Array.isArray(order) && order.length > 0;
    if (ordered) return gr.every((r, i) => sameValue(r, or[i]));
    const a = gr.map(rowKey).sort();
    const b = or.map(rowKey).sort();
    return a.every((x, i) => x === b[i]);
  }
  if (g && o && (g.type === 'set' || g.type === 'best') && g.type === o.type && Array.isArray(g.members) && Array.isArray(o.members)) {
    const a = [...new Set(g.members as string[])].sort();
    const b = [...new Set(o.members as string[])].sort();
    return a.length === b.length && a.every((x, i) => x === b[i]);
  }
  return sameValue(gold, got);
}
