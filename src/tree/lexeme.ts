/**
 * Token values ⇄ lexemes, by the class's `as` kind (README, `token`):
 * text = the lexeme; int = a safe integer in decimal; number = a finite number printed the way
 * JSON.stringify prints it; json-string = RFC 8259 double-quoted string (JSON.stringify /
 * JSON.parse); sql-string = single-quoted with '' for a quote.
 */
import type { ValueKind } from '../description/ir.ts';
import type { TokenInfo } from './info.ts';

export type TokenValue = string | number;

/** The canonical lexeme of a value (no validity check; see tokenValueProblem). */
export function valueToLexeme(kind: ValueKind, value: TokenValue): string {
  switch (kind) {
    case 'text':
      return String(value);
    case 'int':
      return String(value);
    case 'number':
      return JSON.stringify(value);
    case 'json-string':
      return JSON.stringify(value);
    case 'sql-string':
      return `'${String(value).replace(/'/g, "''")}'`;
  }
}

/** The value a lexeme stands for; null when it has none (out-of-range number, bad string). */
export function lexemeToValue(kind: ValueKind, lexeme: string): TokenValue | null {
  switch (kind) {
    case 'text':
      return lexeme;
    case 'int': {
      if (!/^[+-]?[0-9]+$/.test(lexeme)) return null;
      const n = Number(lexeme);
      return Number.isSafeInteger(n) ? n + 0 : null;
    }
    case 'number': {
      const n = Number(lexeme);
      // -0 reads as 0: trees never hold -0 (JSON.stringify prints it as 0)
      return Number.isFinite(n) && lexeme.trim() !== '' ? n + 0 : null;
    }
    case 'json-string':
      try {
        const v: unknown = JSON.parse(lexeme);
        return typeof v === 'string' ? v : null;
      } catch {
        return null;
      }
    case 'sql-string':
      if (lexeme.length < 2 || lexeme[0] !== "'" || lexeme[lexeme.length - 1] !== "'") return null;
      return lexeme.slice(1, -1).replace(/''/g, "'");
  }
}

const KIND_WORDS: Record<ValueKind, string> = {
  text: 'a string',
  int: 'a safe integer',
  number: 'a finite number',
  'json-string': 'a string',
  'sql-string': 'a string',
};

/** How a value of this kind is described in messages ("a safe integer"). */
export function kindWords(kind: ValueKind): string {
  return KIND_WORDS[kind];
}

/**
 * Why `value` is not a valid value of the token class, or null when it is: the JSON type must fit
 * the kind, the printed lexeme must match the class regex (and not be a keyword of a `reserved`
 * class), and reading the lexeme back must give the same value.
 */
export function tokenValueProblem(tok: TokenInfo, value: unknown): string | null {
  const kind = tok.token.value;
  const numeric = kind === 'int' || kind === 'number';
  if (numeric ? typeof value !== 'number' : typeof value !== 'string') return `expected ${tok.token.name} (${kindWords(kind)})`;
  const v = value as TokenValue;
  if (kind === 'int' && !Number.isSafeInteger(v)) return `expected ${tok.token.name} (${kindWords(kind)})`;
  if (kind === 'number' && !Number.isFinite(v)) return `expected ${tok.token.name} (${kindWords(kind)})`;
  const lexeme = valueToLexeme(kind, v);
  if (!tok.matches(lexeme)) return `${tok.token.name} cannot spell ${JSON.stringify(v)}: ${lexeme} does not match /${tok.token.pattern}/${tok.token.flags}`;
  if (tok.token.reserved && tok.keywordClash.includes(lexeme)) return `${tok.token.name} cannot spell the keyword ${JSON.stringify(lexeme)}`;
  if (!Object.is(lexemeToValue(kind, lexeme), v)) return `${tok.token.name} cannot spell ${Object.is(v, -0) ? '-0' : JSON.stringify(v)} exactly (it prints as ${lexeme})`;
  return null;
}

/** Why `name` cannot be a member of a name set spelled by `tok` (regex, reserved keywords), or null. */
export function nameSpellingProblem(tok: TokenInfo, name: string): string | null {
  if (!tok.matches(name)) return `'${name}' is not a lexeme of ${tok.token.name} /${tok.token.pattern}/${tok.token.flags}`;
  if (tok.token.reserved && tok.keywordClash.includes(name)) return `'${name}' is a keyword, not a lexeme of ${tok.token.name}`;
  return null;
}
