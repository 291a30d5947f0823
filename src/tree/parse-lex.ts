/**
 * The parser's lexer: each token class is read by its DFA from the description stage's regex
 * front-end (TokenClass.regex.dfa, the automaton the masks use too), longest match, in time linear
 * in the characters read — no JavaScript RegExp and no PEG translation of the regex ever runs.
 *
 * The generated ohm grammar has one placeholder rule `lex<i>` per token class; `installLexers`
 * replaces its body with a `DfaTerminal`, an ohm expression object whose `eval` runs the DFA.
 * This relies on ohm-js 17's expression protocol (the version is pinned in package.json): `eval`
 * consumes input by moving `state.inputStream.pos` and pushes one terminal node binding, as ohm's
 * own Terminal does; on failure it records the failure at the start position.
 */
import * as ohm from 'ohm-js';
import type { Grammar } from '../description/ir.ts';
import { longestMatch, type ByteDfa } from '../description/regex/index.ts';

/** Placeholder body of rule `lex<i>` in the generated text (never matched: it is replaced). */
export function lexPlaceholder(i: number): string {
  return `"\\u{E000}lex${i}"`;
}

interface MatchState {
  inputStream: { source: string; pos: number; examinedLength: number };
  pushBinding(node: unknown, origPos: number): void;
  processFailure(pos: number, expr: unknown): void;
}

type TerminalNodeClass = new (matchLength: number) => unknown;

/** ohm's TerminalNode class, taken from what its own `any` expression pushes (it is not exported). */
let terminalNode: TerminalNodeClass | undefined;
function terminalNodeClass(): TerminalNodeClass {
  if (terminalNode === undefined) {
    const probe: MatchState = {
      inputStream: { source: 'x', pos: 0, examinedLength: 0, nextCodePoint: () => 0x78 } as MatchState['inputStream'],
      pushBinding: (node) => {
        terminalNode = (node as { constructor: TerminalNodeClass }).constructor;
      },
      processFailure: () => undefined,
    };
    (ohm.pexprs.any as unknown as { eval(state: MatchState): boolean }).eval(probe);
    if (terminalNode === undefined) throw new Error('ohm-js: cannot find its terminal node class (an unsupported version?)');
  }
  return terminalNode;
}

const Terminal = ohm.pexprs.Terminal as unknown as new (text: string) => object;

/** An ohm expression that matches the longest lexeme of a byte DFA at the current position. */
class DfaTerminal extends Terminal {
  constructor(
    private readonly dfa: ByteDfa,
    private readonly node: TerminalNodeClass,
    name: string,
  ) {
    super(name); // the text ohm shows for this expression (rules around it carry descriptions)
  }

  eval(state: MatchState): boolean {
    const input = state.inputStream;
    const from = input.pos;
    const end = longestMatch(this.dfa, input.source, from);
    input.examinedLength = Math.max(input.examinedLength, end < 0 ? from + 1 : end + 1);
    if (end <= from) {
      state.processFailure(from, this);
      return false;
    }
    input.pos = end;
    state.pushBinding(new this.node(end - from), from);
    return true;
  }

  _isNullable(): boolean {
    return false;
  }
}

/** Placeholder body of rule `fill<i>` (filler i), replaced like `lex<i>`. */
export function fillPlaceholder(i: number): string {
  return `"\\u{E000}fill${i}"`;
}

/** Replaces the body of every `lex<i>` rule of `og` with the DFA of token class i, and of `fill<i>` with filler i's. */
export function installLexers(og: ohm.Grammar, grammar: Grammar): void {
  const node = terminalNodeClass();
  const rules = og.rules as unknown as Record<string, { body: unknown }>;
  grammar.tokens.forEach((t, i) => {
    const rule = rules[`lex${i}`];
    if (rule === undefined) throw new Error(`generated grammar lacks lex${i}`);
    rule.body = new DfaTerminal(t.regex.dfa, node, t.name);
  });
  grammar.fillers.forEach((f, i) => {
    const rule = rules[`fill${i}`];
    if (rule === undefined) throw new Error(`generated grammar lacks fill${i}`);
    rule.body = new DfaTerminal(f.regex.dfa, node, 'filler');
  });
}
