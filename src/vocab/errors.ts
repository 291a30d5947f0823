/**
 * The vocabulary stage's error catalogue: every failure to read a tokenizer file is a
 * `VocabularyError` naming the file, where in it (a JSON path such as `$.model.vocab["<0x0A>"]`,
 * or line:column for JSON syntax errors) and what was expected.
 */
export class VocabularyError extends Error {
  override readonly name = 'VocabularyError';
  constructor(
    /** The file the problem is in (or `<inline>` when JSON was passed directly). */
    readonly file: string,
    /** JSON path (`$.model.type`) or `line:col` for syntax errors. */
    readonly where: string,
    /** What is wrong and what was expected. */
    readonly detail: string,
  ) {
    super(`${file}: ${where}: ${detail}`);
  }
}

/** Appends a member to a JSON path: `$.model` + `vocab` → `$.model.vocab`; odd keys are quoted. */
export function pathKey(path: string, key: string | number): string {
  if (typeof key === 'number') return `${path}[${key}]`;
  return /^[A-Za-z_][A-Za-z0-9_]*$/.test(key) ? `${path}.${key}` : `${path}[${JSON.stringify(key)}]`;
}

/** A short, printable rendering of a JSON value for messages. */
export function show(value: unknown): string {
  if (value === undefined) return 'nothing';
  let s: string;
  try {
    s = JSON.stringify(value) ?? String(value);
  } catch {
    s = String(value);
  }
  return s.length > 60 ? `${s.slice(0, 57)}...` : s;
}

export function typeName(value: unknown): string {
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'an array';
  if (typeof value === 'object') return 'an object';
  if (typeof value === 'string') return `the string ${show(value)}`;
  if (value === undefined) return 'nothing';
  return `${typeof value} ${show(value)}`;
}

/**
 * Finds where a JSON text stops being valid (RFC 8259 grammar) and returns 1-based line and
 * column. Only called after `JSON.parse` failed, so V8's message format does not matter.
 * Written by hand because it is 80 lines and only runs on the failure path.
 */
export function jsonSyntaxPosition(text: string): { line: number; col: number; expected: string } {
  let i = 0;
  const n = text.length;
  let expected = 'a JSON value';
  const fail = (what: string): never => {
    expected = what;
    throw STOP;
  };
  const ws = () => {
    while (i < n) {
      const c = text.charCodeAt(i);
      if (c === 0x20 || c === 0x09 || c === 0x0a || c === 0x0d) i++;
      else break;
    }
  };
  const lit = (word: string) => {
    if (text.startsWith(word, i)) i += word.length;
    else fail('a JSON value');
  };
  const str = () => {
    i++; // opening quote
    for (;;) {
      if (i >= n) fail('a closing \'"\'');
      const c = text.charCodeAt(i);
      if (c === 0x22) { i++; return; }
      if (c < 0x20) fail('an escaped control character');
      if (c === 0x5c) {
        const e = text[i + 1];
        if (e === 'u') {
          if (!/^[0-9a-fA-F]{4}$/.test(text.slice(i + 2, i + 6))) { i += 2; fail('four hex digits after \\u'); }
          i += 6;
        } else if (e !== undefined && '"\\/bfnrt'.includes(e)) i += 2;
        else { i++; fail('a valid escape (\\" \\\\ \\/ \\b \\f \\n \\r \\t \\uXXXX)'); }
      } else i++;
    }
  };
  const num = () => {
    const m = /^-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?/.exec(text.slice(i, i + 400));
    if (!m) fail('a JSON value');
    i += m![0].length;
  };
  const value = (depth: number): void => {
    ws();
    if (i >= n) fail('a JSON value');
    const c = text[i];
    if (c === '{') {
      i++; ws();
      if (text[i] === '}') { i++; return; }
      for (;;) {
        ws();
        if (text[i] !== '"') fail('a string key');
        str(); ws();
        if (text[i] !== ':') fail('\':\'');
        i++;
        value(depth + 1); ws();
        if (text[i] === ',') { i++; continue; }
        if (text[i] === '}') { i++; return; }
        fail('\',\' or \'}\'');
      }
    } else if (c === '[') {
      i++; ws();
      if (text[i] === ']') { i++; return; }
      for (;;) {
        value(depth + 1); ws();
        if (text[i] === ',') { i++; continue; }
        if (text[i] === ']') { i++; return; }
        fail('\',\' or \']\'');
      }
    } else if (c === '"') str();
    else if (c === 't') lit('true');
    else if (c === 'f') lit('false');
    else if (c === 'n') lit('null');
    else num();
  };
  try {
    value(0);
    ws();
    if (i < n) fail('the end of the file');
  } catch (e) {
    // RangeError: nesting deeper than this scanner's stack; report where it got to.
    if (e !== STOP && !(e instanceof RangeError)) throw e;
    if (e instanceof RangeError) expected = 'less deeply nested JSON';
  }
  let line = 1;
  let lineStart = 0;
  for (let k = 0; k < i && k < n; k++) {
    if (text.charCodeAt(k) === 0x0a) { line++; lineStart = k + 1; }
  }
  return { line, col: i - lineStart + 1, expected };
}

const STOP = Symbol('stop');
