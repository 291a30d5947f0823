/**
 * The parser: code → tree, through an ohm-js grammar generated from the IR.
 *
 * Data flows forward through one file per concern:
 *   parse-generate.ts   grammar IR → ohm grammar text (rules per sort, constructor, field, keyword, token)
 *   parse-lookahead.ts  FIRST/FOLLOW and the one-token look-ahead guards the generator adds
 *   parse-lex.ts        token classes read by their DFAs (longest match), installed into the ohm grammar
 *   parse-build.ts      a match → a JSON tree; a failed match → "expected ..." in grammar terms
 *   parse-check.ts      located checks on the tree: bound names, variable scoping
 *
 * The PEG reads alternatives in order and never reconsiders a choice that succeeded; the FOLLOW
 * look-ahead makes it reconsider when the next token cannot follow (lf: `h($x)` is a class test
 * unless a comparison operator follows). It is added only where two alternatives can begin with
 * the same character. Likewise an optional part or list element that can begin like what follows
 * it (`H<n>` rules) is taken only when the next token can come after it. Beyond that one token,
 * lists and optional parts are greedy. Token lexemes are the longest match of the class's DFA.
 *
 * Cost: ohm memoises every rule at every position: O(n · R) time and memory for n characters and
 * R generated rules (left recursion grows seeds, linear per level); a lexer runs in time linear in
 * the characters it reads. Building the parser is O(size of the grammar) plus ohm's compilation of
 * the generated grammar text — a few hundred milliseconds for the shipped grammars in a cold
 * process, so the compiled package carries them compiled already: `.build/build.mjs` writes
 * `parsers.json` beside this module in dist/ (`parserRecipes`: ohm's recipe of each shipped
 * grammar's parser, keyed by the SHA-256 of the generated text), and a parser whose text is there
 * is rebuilt from it in milliseconds. Any other grammar (and the sources run through tsx) compiles.
 */
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import * as ohm from 'ohm-js';
import type { Grammar, NameBindings } from '../description/ir.ts';
import { grammarInfo } from './info.ts';
import { buildSemantics, syntaxError, type SpanTable } from './parse-build.ts';
import { checkParsed } from './parse-check.ts';
import { ParseError, GrammarFeatureError } from './parse-errors.ts';
import { ohmSource, type Generated } from './parse-generate.ts';
import { installLexers } from './parse-lex.ts';
import type { Tree } from './validate.ts';
import { guardedMatch, nestingProblem } from './depth.ts';
import { locateIssue, resolveTree } from './resolve.ts';

export { ParseError, GrammarFeatureError, ohmSource };

export interface ParseOptions {
  /** file name for messages (default `<input>`) */
  readonly file?: string;
  /** when given, names of these sets must be members (others are unchecked) */
  readonly names?: NameBindings;
  /** check scopes and kinds (resolve.ts) after parsing; default true */
  readonly resolve?: boolean;
}

export interface Parser {
  /** Parses a whole program of the start sort; throws ParseError. */
  parse(text: string, opts?: string | ParseOptions): Tree;
  /** the generated ohm grammar source (for debugging and docs; `lex<i>` rules are placeholders for the token DFAs) */
  readonly source: string;
}

interface Built {
  readonly ohmGrammar: ohm.Grammar;
  readonly semantics: ohm.Semantics;
  readonly generated: Generated;
}

const builtCache = new WeakMap<Grammar, Built>();

// ohm exports makeRecipe and Grammar#toRecipe (its CLI's generated modules use them); its typings omit them
const { makeRecipe } = ohm as unknown as { makeRecipe(recipe: unknown): ohm.Grammar };
const toRecipe = (g: ohm.Grammar): string => (g as unknown as { toRecipe(): string }).toRecipe();
const sha256 = (text: string): string => createHash('sha256').update(text).digest('hex');

/** parsers.json beside this module (see the header), read on first use; null when absent or unreadable. */
let prebuilt: Record<string, unknown> | null | undefined;

/** The parser grammar rebuilt from parsers.json when it holds `source`'s recipe (and the recipe is of that very text); else null. */
function fromPrebuilt(source: string): ohm.Grammar | null {
  if (prebuilt === undefined) {
    try {
      const value: unknown = JSON.parse(readFileSync(new URL('./parsers.json', import.meta.url), 'utf8'));
      prebuilt = value !== null && typeof value === 'object' && !Array.isArray(value) ? (value as Record<string, unknown>) : null;
    } catch {
      prebuilt = null; // running from the sources, or a package without it: compile
    }
  }
  return prebuilt === null ? null : grammarFromRecipes(prebuilt, source);
}

/** The ohm grammar of `source` rebuilt from a table of parserRecipes, or null when the table has no recipe of exactly that text. */
export function grammarFromRecipes(table: Readonly<Record<string, unknown>>, source: string): ohm.Grammar | null {
  const recipe = table[sha256(source)];
  if (typeof recipe !== 'string') return null;
  try {
    const r = JSON.parse(recipe) as unknown[];
    if ((r[1] as { source?: unknown } | undefined)?.source !== source.trim()) return null;
    return makeRecipe(r);
  } catch {
    return null;
  }
}

/**
 * ohm's recipes of the parsers of `grammars`, keyed by the SHA-256 of their generated text: the
 * content of parsers.json, written by the package build for the shipped grammars.
 */
export function parserRecipes(grammars: readonly Grammar[]): Record<string, string> {
  const out: Record<string, string> = {};
  for (const g of grammars) {
    const { source } = ohmSource(g);
    out[sha256(source)] = toRecipe(ohm.grammar(source));
  }
  return out;
}

/** Whether `grammar`'s parser is rebuilt from parsers.json rather than compiled (for tests and the bench). */
export function parserPrebuilt(grammar: Grammar): boolean {
  return fromPrebuilt(ohmSource(grammar).source) !== null;
}

function built(grammar: Grammar): Built {
  let built = builtCache.get(grammar);
  if (built === undefined) {
    const generated = ohmSource(grammar);
    const ohmGrammar = fromPrebuilt(generated.source) ?? ohm.grammar(generated.source);
    installLexers(ohmGrammar, grammar);
    const semantics = buildSemantics(grammarInfo(grammar), ohmGrammar, generated.mixedEnds);
    built = { ohmGrammar, semantics, generated };
    builtCache.set(grammar, built);
  }
  return built;
}

/** The ohm grammar the parser runs, token DFAs installed (for tests and debugging: match single rules). */
export function parserGrammar(grammar: Grammar): ohm.Grammar {
  return built(grammar).ohmGrammar;
}

/** The offset of the first UTF-16 surrogate not part of a pair, or -1 (well-formed text). */
export function loneSurrogate(text: string): number {
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (c >= 0xd800 && c <= 0xdbff) {
      const d = text.charCodeAt(i + 1);
      if (d >= 0xdc00 && d <= 0xdfff) {
        i++;
        continue;
      }
      return i;
    }
    if (c >= 0xdc00 && c <= 0xdfff) return i;
  }
  return -1;
}

export function createParser(grammar: Grammar): Parser {
  const info = grammarInfo(grammar);
  const b = built(grammar);
  return {
    source: b.generated.source,
    parse(text: string, opts?: string | ParseOptions): Tree {
      const o: ParseOptions = typeof opts === 'string' ? { file: opts } : (opts ?? {});
      const file = o.file ?? '<input>';
      const lone = loneSurrogate(text);
      if (lone >= 0) {
        const hex = text.charCodeAt(lone).toString(16).toUpperCase();
        throw new ParseError(file, text, { start: lone, end: lone + 1 }, `an unpaired surrogate U+${hex}: program text must be valid Unicode (no UTF-8 encoder, and so no tokenizer, can produce it)`);
      }
      try {
        const m = guardedMatch(b.ohmGrammar, text, 'Start');
        if (m.failed()) throw syntaxError(b.generated, file, text, m);
        const spans: SpanTable = new WeakMap();
        const ctx = { file, text, spans };
        const tree = (b.semantics(m) as unknown as { tree(ctx: unknown): Tree }).tree(ctx);
        // scopes and kinds first: a column no table in scope has reads better than "unknown name"
        if (grammar.scoped && o.resolve !== false) {
          const issue = locateIssue(resolveTree(grammar, tree, o.names), spans);
          if (issue !== null) throw new ParseError(file, text, issue.span, issue.message);
        }
        checkParsed(info, tree, o.names, ctx);
        return tree;
      } catch (e) {
        const deep = nestingProblem(e, text);
        throw deep === null ? e : new ParseError(file, text, { start: deep.offset, end: deep.offset + 1 }, deep.message);
      }
    },
  };
}
