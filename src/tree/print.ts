/**
 * The printer: tree → canonical code.
 *
 * Layout (README, "Layout items" and "Canonical layout"): one space between printed items unless
 * the item is glued (`~`); a `~` on an item that prints nothing carries over to the next printed
 * item; a `~` before anything of the same template has printed is ignored (the enclosing template
 * decides the spacing around a node). List elements are separated by one space, or by the
 * separator (glued to the element before it when written `sep ~","`, then one space).
 *
 * Two rules keep the output parseable where a glue would merge two tokens (both follow from the
 * parser's word-boundary and longest-keyword rules): a space is printed anyway between two word
 * characters, and after a keyword when the glued text would extend it into a longer keyword
 * (`<` then `=` is printed `< =`, never `<=`).
 *
 * The blank printed is the description's own (`space`): a space when `space` holds one, else its
 * first character (a tab for `space "\t"`); with `space ""` nothing can stand between tokens, so
 * the printer prints none, refuses a tree where two tokens would run together (the two rules
 * above), and parses what it printed to check that it reads back as the same tree (a glued
 * grammar's lexemes may merge in other ways: `1` then `2` would read as `12`). Every printed text
 * parses: what cannot be printed throws PrintError.
 *
 * Declared blanks (`blank Ws = " \t"`): a layout's `Ws` and `Ws?` print the blank's character (a
 * space when it has one, else its first), a glued `~Ws?` prints nothing; no `space` blank is
 * printed next to a declared one. Separator blanks (`sep (Ws? "," Ws?)`) likewise.
 *
 * Parentheses: an operator node is wrapped in its sort's `parens` exactly when the parser's
 * precedence levels could not read it in that position (see needsParens).
 */
import type { BlankClass, Constructor, Grammar, LayoutItem } from '../description/ir.ts';
import { grammarInfo, type GrammarInfo } from './info.ts';
import { valueToLexeme, type TokenValue } from './lexeme.ts';
import { isWordCode } from './regex.ts';
import { assertTree, type Tree, type TreeValue } from './validate.ts';
import { createParser, ParseError } from './parse.ts';

/** A valid tree that has no text in its grammar (only with `space ""`: two tokens would run together). */
export class PrintError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'PrintError';
  }
}

/**
 * The blank the printer puts between tokens: a space when the description's `space` allows one,
 * else its first character, or '' when `space` is empty. Keep in sync with the README's
 * "Canonical layout".
 */
export function printedBlank(grammar: Grammar): string {
  if (grammar.space.includes(' ')) return ' ';
  return grammar.space.length > 0 ? String.fromCodePoint(grammar.space.codePointAt(0)!) : '';
}

/** Prints a tree of the start sort (validated first; throws TreeError with a JSON path when invalid). */
export function printTree(grammar: Grammar, tree: unknown, opts: { sort?: string } = {}): string {
  assertTree(grammar, tree, { sort: opts.sort });
  const out = new Output(grammarInfo(grammar));
  printNode(out, tree, false, null);
  const text = out.text();
  if (out.blank === '' && (opts.sort === undefined || opts.sort === grammar.start)) checkGlued(grammar, tree, text);
  return text;
}

/** With `space ""`: the printed text must read back as the tree (else PrintError). */
function checkGlued(grammar: Grammar, tree: Tree, text: string): void {
  let back: Tree;
  try {
    back = createParser(grammar).parse(text, '<printed>');
  } catch (e) {
    if (!(e instanceof ParseError)) throw e;
    throw new PrintError(`cannot print this tree: its tokens run together as ${JSON.stringify(text)}, which does not parse (the description's space is empty, so nothing can separate them)`);
  }
  if (JSON.stringify(back) !== JSON.stringify(tree)) {
    throw new PrintError(`cannot print this tree: its tokens run together as ${JSON.stringify(text)}, which reads back as another tree (the description's space is empty, so nothing can separate them)`);
  }
}

/**
 * The canonical tokens of a tree, in order: each lexeme or keyword with whether the canonical text
 * puts a space before it, or (`blank`) the declared blank it prints before it. `printTree` is
 * these joined. (Tests re-space programs with it.)
 */
export function printTokens(grammar: Grammar, tree: unknown, opts: { sort?: string } = {}): { text: string; space: boolean; blank?: string }[] {
  assertTree(grammar, tree, { sort: opts.sort });
  const out = new Output(grammarInfo(grammar));
  printNode(out, tree, false, null);
  return out.tokens;
}

/** Position of a child inside an operator parent: which operand, and the parent's constructor. */
interface OperandPosition {
  readonly parent: Constructor;
  readonly side: 'left' | 'right';
}

class Output {
  private readonly parts: string[] = [];
  readonly tokens: { text: string; space: boolean; blank?: string }[] = [];
  private last = '';
  /** a declared blank printed since the last token (it separates; no other blank is added) */
  private pendingBlank = '';
  private lastIsKeyword = false;
  private readonly longer: ReadonlyMap<string, readonly string[]>;
  readonly blank: string;
  constructor(readonly info: GrammarInfo) {
    this.blank = printedBlank(info.grammar);
    const longer = new Map<string, string[]>();
    for (const k of info.grammar.keywords) {
      const ext = info.grammar.keywords.filter((l) => l.length > k.length && l.startsWith(k));
      if (ext.length > 0) longer.set(k, ext);
    }
    this.longer = longer;
  }
  /** Appends a declared blank (its printed text) before the next token. */
  emitBlank(blank: BlankClass): void {
    const t = blank.chars.includes(' ') ? ' ' : String.fromCodePoint(blank.chars.codePointAt(0)!);
    this.parts.push(t);
    this.pendingBlank += t;
  }
  /** Appends one token; `glue` asks for no space before it. */
  emit(text: string, glue: boolean, keyword: boolean): void {
    let space = false;
    if (this.pendingBlank !== '') {
      this.parts.push(text);
      this.tokens.push({ text, space: false, blank: this.pendingBlank });
      this.pendingBlank = '';
      this.last = text;
      this.lastIsKeyword = keyword;
      return;
    }
    if (this.parts.length > 0) {
      let needed = isWordCode(this.last.charCodeAt(this.last.length - 1)) && isWordCode(text.charCodeAt(0));
      if (!needed && this.lastIsKeyword) {
        const joined = this.last + text;
        if (this.longer.get(this.last)?.some((l) => joined.startsWith(l))) needed = true;
      }
      if (needed && this.blank === '') {
        throw new PrintError(
          `cannot print this tree: ${JSON.stringify(this.last)} and ${JSON.stringify(text)} would run together into one token, and the description's space is empty, so nothing can separate them`,
        );
      }
      space = this.blank !== '' && (needed || !glue);
      if (space) this.parts.push(this.blank);
    }
    this.parts.push(text);
    this.tokens.push({ text, space });
    this.last = text;
    this.lastIsKeyword = keyword;
  }
  text(): string {
    return this.parts.join('');
  }
}

/**
 * Prints `node`; `glue` is the spacing the enclosing template asks for before the node's first
 * token. Returns whether anything was printed.
 */
function printNode(out: Output, node: Tree, glue: boolean, position: OperandPosition | null): boolean {
  const info = out.info;
  const ctor = info.ctor.get(node.kind)!;
  if (position !== null && needsParens(ctor, position)) {
    const parens = info.sort.get(ctor.sort)!.parens!;
    out.emit(parens.open, glue, true);
    printTemplate(out, ctor, node, true);
    out.emit(parens.close, true, true);
    return true;
  }
  return printTemplate(out, ctor, node, glue);
}

function printTemplate(out: Output, ctor: Constructor, node: Tree, glueIn: boolean): boolean {
  const state = { started: false, carry: false, glueIn };
  const operands = out.info.operands.get(ctor.name);
  const walk = (items: readonly LayoutItem[]) => {
    for (const item of items) {
      const glue = state.started ? state.carry || item.glue : state.glueIn;
      let printed = false;
      if (item.kind === 'text') {
        out.emit(item.text, glue, true);
        printed = true;
      } else if (item.kind === 'blank') {
        // never first or last in a layout (compile.ts); a glued optional blank prints nothing
        if (!(item.optional && item.glue)) out.emitBlank(blankOf(out, item.blank));
        else if (state.started) state.carry = glue;
        continue;
      } else if (item.kind === 'slot') {
        const value = node[item.field];
        const field = out.info.field(ctor.name, item.field)!;
        const pos: OperandPosition | null =
          operands === undefined ? null
          : operands.left === item.field ? { parent: ctor, side: 'left' }
          : operands.right === item.field ? { parent: ctor, side: 'right' }
          : null;
        if (field.card === 'list' || field.card === 'nonempty') {
          const list = value as readonly TreeValue[];
          for (let i = 0; i < list.length; i++) {
            let g = glue;
            if (i > 0) {
              if (item.sep !== null) {
                const sb = item.sepBlanks;
                if (sb?.before && !(sb.before.optional && sb.before.glue)) out.emitBlank(blankOf(out, sb.before.blank));
                out.emit(item.sep, item.sepGlue, true);
                if (sb?.after && !(sb.after.optional && sb.after.glue)) out.emitBlank(blankOf(out, sb.after.blank));
              }
              g = false;
            }
            if (printValue(out, field.type.kind, field.type.name, list[i], printed ? g : glue, pos)) printed = true;
          }
        } else if (value !== null) {
          printed = printValue(out, field.type.kind, field.type.name, value, glue, pos);
        }
      } else {
        const value = node[item.field];
        const present = Array.isArray(value) ? value.length > 0 : value !== null;
        if (present) {
          const before = state.started;
          state.carry = glue;
          if (!before) state.glueIn = glue;
          walk(item.items);
          continue;
        }
      }
      if (printed) {
        state.started = true;
        state.carry = false;
      } else if (state.started) {
        state.carry = glue;
      } else {
        // nothing printed yet: the enclosing template's spacing still applies to the first token
      }
    }
  };
  walk(ctor.layout);
  return state.started;
}

function blankOf(out: Output, name: string): BlankClass {
  return out.info.grammar.blanks.find((b) => b.name === name)!;
}

function printValue(out: Output, kind: 'sort' | 'token' | 'names', typeName: string, value: TreeValue, glue: boolean, pos: OperandPosition | null): boolean {
  if (kind === 'sort') return printNode(out, value as Tree, glue, pos);
  if (kind === 'names') {
    out.emit(value as string, glue, false);
    return true;
  }
  const tok = out.info.token.get(typeName)!;
  out.emit(valueToLexeme(tok.token.value, value as TokenValue), glue, false);
  return true;
}

/**
 * Whether an operator node `child` needs parentheses as the `side` operand of `parent`. The parser
 * reads operands with precedence levels: the left operand of a left-associative infix at level P
 * (and the operand of a postfix at P) accepts operators of precedence ≥ P; the right operand of a
 * right-associative infix (and the operand of a prefix) likewise; other operand positions accept
 * only precedence > P. At equal precedence only shapes that associate the same way read back
 * unchanged: left infix/postfix on the left, right infix/prefix on the right; under a prefix
 * anything at its level; under a postfix left infix/postfix.
 * Keep in sync with the level rules in parse.ts.
 */
export function needsParens(child: Constructor, position: OperandPosition): boolean {
  const c = child.operator;
  if (c === null) return false;
  const p = position.parent.operator!;
  if (c.precedence > p.precedence) return false;
  if (c.precedence < p.precedence) return true;
  const childLeftish = (c.fixity === 'infix' && c.assoc === 'left') || c.fixity === 'postfix';
  const childRightish = (c.fixity === 'infix' && c.assoc === 'right') || c.fixity === 'prefix';
  if (p.fixity === 'prefix') return false;
  if (p.fixity === 'postfix') return !childLeftish;
  if (p.assoc === 'left' && position.side === 'left') return !childLeftish;
  if (p.assoc === 'right' && position.side === 'right') return !childRightish;
  return true;
}
