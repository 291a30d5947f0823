/**
 * The one syntax diagnostic of a description that does not match the notation, worded in our own
 * terms: ohm's failure records are translated (literal text in quotes, our rule descriptions such as
 * "a name"), its internal rule names and negated look-aheads are never shown.
 *
 * Order of checks:
 * 1. A lexical scan finds literals that never close — a string (`unclosed-string`), a regular
 *    expression (`unclosed-regex`), a character class inside one (`unclosed-regex-class`) — and the
 *    empty pattern `//` (`empty-regex`). The scan mirrors the `string`, `regex` and `comment` rules of
 *    notation.ts (keep in sync); it wins when it stops at or before the place ohm stopped.
 * 2. Where a declaration was expected: `not-a-declaration`, with the declaration keywords read from
 *    the notation grammar itself (the `Decl` rule), and the closest keyword as a hint.
 * 3. Anything else: `syntax`, "expected A, B or C, found X".
 *
 * When ohm stops inside a word (a keyword followed by more letters, `sortt`), the word is reported as
 * a whole: the text is matched once more with the word replaced by a character no rule accepts, so
 * the expectations are those at the start of the word.
 *
 * Cost: one extra match of the text at most; the scan is linear.
 */
import { suggest } from './compile.ts';
import * as E from './errors.ts';
import type { Diagnostic } from './errors.ts';
import type { Span } from './ir.ts';
import { notationGrammar, parseNotation, type NotationFailure } from './notation.ts';

interface PExpr {
  readonly constructor: { readonly name: string };
  readonly terms?: readonly PExpr[];
  readonly factors?: readonly PExpr[];
  readonly ruleName?: string;
  readonly obj?: unknown;
}
type Rules = Record<string, { readonly body: PExpr; readonly description?: string }>;

/** The keyword a rule starts with (`startKw = "start" ~identPart`), or null. */
function leadingKeyword(rules: Rules, ruleName: string): string | null {
  const first = rules[ruleName]?.body.factors?.[0];
  const kw = first?.ruleName === undefined ? undefined : rules[first.ruleName]?.body.factors?.[0]?.obj;
  return typeof kw === 'string' ? kw : null;
}

let read: { keywords: readonly string[]; descriptions: ReadonlySet<string> } | null = null;

/** What the wording reads from the notation grammar, read once, on the first syntax error. */
function fromNotation(): { keywords: readonly string[]; descriptions: ReadonlySet<string> } {
  if (read === null) {
    const rules = notationGrammar().rules as unknown as Rules;
    read = {
      keywords: (rules['Decl']?.body.terms ?? [])
        .map((t) => (t.ruleName === undefined ? null : leadingKeyword(rules, t.ruleName)))
        .filter((k): k is string => k !== null),
      // descriptions written in the notation grammar (`name (a name) = ...`): our own words, safe to show
      descriptions: new Set(
        Object.values(rules)
          .map((r) => r.description)
          .filter((d): d is string => typeof d === 'string' && d.length > 0),
      ),
    };
  }
  return read;
}

/** The words that begin a declaration, in the order of the notation's `Decl` rule. */
export function declarationKeywords(): readonly string[] {
  return fromNotation().keywords;
}

/** ohm's built-in descriptions that may appear, in our words. */
const BUILTIN_WORDS: Record<string, string> = {
  'end of input': 'the end of the file',
  'a letter': 'a letter',
  'a digit': 'a digit',
  'an alpha-numeric character': 'a letter or digit',
};

/** A failure record in our words, or null when it is not worth listing (fluffy, negated, internal). */
function itemOf(f: NotationFailure): string | null {
  if (f.fluffy) return null;
  if (f.type === 'string') return JSON.stringify(f.text);
  if (f.type !== 'description') return null;
  if (fromNotation().descriptions.has(f.text)) return f.text;
  return BUILTIN_WORDS[f.text] ?? null;
}

/** "a", "a or b", "a, b or c". */
export function listOf(items: readonly string[]): string {
  if (items.length <= 1) return items[0] ?? 'nothing';
  return `${items.slice(0, -1).join(', ')} or ${items[items.length - 1]}`;
}

function isWordChar(c: number): boolean {
  return (c >= 48 && c <= 57) || (c >= 65 && c <= 90) || (c >= 97 && c <= 122) || c === 95;
}

/** The offset after the last character that is not a blank of the notation (above U+0020). */
function contentEnd(text: string): number {
  let end = text.length;
  while (end > 0 && text.charCodeAt(end - 1) <= 32) end--;
  return end;
}

/** What stands at `offset`, in words, and where it ends. */
function foundAt(text: string, offset: number): { found: string; end: number } {
  if (offset >= contentEnd(text)) return { found: 'the end of the file', end: offset };
  const ch = text[offset]!;
  if (ch === '\n' || ch === '\r') return { found: 'the end of the line', end: offset + 1 };
  let end = offset;
  while (end < text.length && end - offset < 64 && isWordChar(text.charCodeAt(end))) end++;
  if (end > offset) return { found: '`' + text.slice(offset, end) + '`', end };
  if (ch === '"') return { found: 'a string literal', end: offset + 1 };
  if (ch === '/') return { found: 'a regular expression', end: offset + 1 };
  const cp = text.codePointAt(offset)!;
  const width = cp > 0xffff ? 2 : 1;
  if (cp < 32 || cp === 127) return { found: `the control character U+${cp.toString(16).toUpperCase().padStart(4, '0')}`, end: offset + 1 };
  return { found: '`' + text.slice(offset, offset + width) + '`', end: offset + width };
}

/** A literal that does not close: the span reported, and where the literal itself opens (the `/` of a regex whose class is open). */
type Lexical = { kind: 'unclosed-string' | 'unclosed-regex' | 'unclosed-regex-class' | 'empty-regex'; span: Span; opens: number };

/**
 * The first literal that does not close, or the first `//`, scanning comments, strings and regular
 * expressions as the notation's lexical rules do (keep in sync with `string`, `regex`, `comment`).
 */
export function scanLiterals(text: string): Lexical | null {
  const n = text.length;
  const lineEnd = (i: number) => {
    const e = text.indexOf('\n', i);
    return e < 0 ? n : e;
  };
  let i = 0;
  while (i < n) {
    const c = text.charCodeAt(i);
    if (c === 35 /* # */) {
      i = lineEnd(i);
    } else if (c === 34 /* " */) {
      const open = i++;
      for (;;) {
        if (i >= n || text.charCodeAt(i) === 10) return { kind: 'unclosed-string', span: { start: open, end: i }, opens: open };
        const d = text.charCodeAt(i);
        if (d === 34) break;
        if (d === 92 /* \ */) {
          if (i + 1 >= n || text.charCodeAt(i + 1) === 10) return { kind: 'unclosed-string', span: { start: open, end: i + 1 }, opens: open };
          i += 2;
        } else i++;
      }
      i++;
    } else if (c === 47 /* / */) {
      const open = i++;
      if (i < n && text.charCodeAt(i) === 47) return { kind: 'empty-regex', span: { start: open, end: open + 2 }, opens: open };
      for (;;) {
        if (i >= n || text.charCodeAt(i) === 10) return { kind: 'unclosed-regex', span: { start: open, end: i }, opens: open };
        const d = text.charCodeAt(i);
        if (d === 47) break;
        if (d === 92) {
          if (i + 1 >= n || text.charCodeAt(i + 1) === 10) return { kind: 'unclosed-regex', span: { start: open, end: i + 1 }, opens: open };
          i += 2;
        } else if (d === 91 /* [ */) {
          const cls = i++;
          for (;;) {
            if (i >= n || text.charCodeAt(i) === 10) return { kind: 'unclosed-regex-class', span: { start: cls, end: i }, opens: open };
            const e = text.charCodeAt(i);
            if (e === 93 /* ] */) break;
            if (e === 92) {
              if (i + 1 >= n || text.charCodeAt(i + 1) === 10) return { kind: 'unclosed-regex-class', span: { start: cls, end: i + 1 }, opens: open };
              i += 2;
            } else i++;
          }
          i++;
        } else i++;
      }
      i++;
    } else i++;
  }
  return null;
}

/** The diagnostic for text that parseNotation refused at `offset` with `failures`. */
export function notationSyntaxError(
  text: string,
  file: string,
  offset: number,
  failures: readonly NotationFailure[],
): Diagnostic {
  const lexical = scanLiterals(text);
  if (lexical !== null && lexical.opens <= offset) {
    const at = { file, span: lexical.span };
    switch (lexical.kind) {
      case 'unclosed-string':
        return E.unclosedString(at);
      case 'unclosed-regex':
        return E.unclosedRegex(at);
      case 'unclosed-regex-class':
        return E.unclosedRegexClass(at);
      case 'empty-regex':
        return E.emptyRegex(at);
    }
  }
  let pos = offset;
  let fs = failures;
  // inside a word: report the word from its start, with the expectations there
  if (pos < text.length && pos > 0 && isWordChar(text.charCodeAt(pos)) && isWordChar(text.charCodeAt(pos - 1))) {
    let start = pos;
    while (start > 0 && isWordChar(text.charCodeAt(start - 1))) start--;
    // U+007F: above ohm's `space` range (which takes every control character) and no rule's first character
    const again = parseNotation(text.slice(0, start) + '\u007f');
    if (!again.ok && again.offset === start) {
      pos = start;
      fs = again.failures;
    }
  }
  // ohm may stop before the blanks that precede the offending text: report the text itself, or
  // the end of the file where only blanks follow (the notation's `space`: every character up to U+0020)
  let next = pos;
  while (next < text.length && text.charCodeAt(next) <= 32) next++;
  pos = next < text.length ? next : Math.min(pos, contentEnd(text));
  const items: string[] = [];
  for (const f of fs) {
    const item = itemOf(f);
    if (item !== null && !items.includes(item)) items.push(item);
  }
  const { found, end } = foundAt(text, pos);
  const at = { file, span: { start: pos, end } };
  const keywords = declarationKeywords();
  const declWords = keywords.filter((k) => items.includes(JSON.stringify(k)));
  if (declWords.length > 0 && declWords.length === keywords.length && pos < text.length) {
    const word = /^[A-Za-z_][A-Za-z0-9_]*/.exec(text.slice(pos, end))?.[0] ?? null;
    const words = items.filter((i) => /^"[a-z]+"$/.test(i)).map((i) => JSON.parse(i) as string);
    return E.notADeclaration(at, found, declWords, word === null ? null : suggest(word, words));
  }
  return E.syntaxError(at, listOf(items.length > 0 ? items : ['something else']), found);
}
