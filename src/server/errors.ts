/**
 * The server's error catalogue: every failure a route reports is an ApiError, sent as
 * `{"error": {"code", "message", "location"?, "line"?, "column"?}}` with its HTTP status.
 * `location` is `file:line:col` (a description, a program text) or a JSON path into the request
 * body (`$.tree.left`); `line`/`column` repeat the position for clients that mark it.
 */
import { parseTree, printParseErrorCode, type ParseError as JsonError } from 'jsonc-parser';
import { lineColumn } from '../util/source.ts';

export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly location?: string,
    readonly position?: { readonly line: number; readonly column: number },
  ) {
    super(message);
  }

  toJSON(): { error: Record<string, unknown> } {
    const error: Record<string, unknown> = { code: this.code, message: this.message };
    if (this.location !== undefined) error.location = this.location;
    if (this.position !== undefined) Object.assign(error, this.position);
    return { error };
  }
}

/** A field of the request body that passed the schema but makes no sense (unknown grammar, …). */
export function badField(path: string, found: string, expected: string): ApiError {
  return new ApiError(400, 'invalid_request', `${path}: found ${found}; expected ${expected}`, path);
}

export function notFound(path: string, what: string, id: string, known: readonly string[]): ApiError {
  if (known.length === 0) return new ApiError(404, `unknown_${what}`, `${path}: no ${what} is loaded; expected the server to be started with --${what} ${what === 'model' ? 'DIR' : 'G'}`, path);
  return new ApiError(404, `unknown_${what}`, `${path}: no ${what} ${JSON.stringify(id)}; expected one of ${known.map((k) => JSON.stringify(k)).join(', ')}`, path);
}

export function overloaded(active: number, queued: number): ApiError {
  return new ApiError(503, 'overloaded', `the server is busy (${active} requests running, ${queued} waiting, both at their limits); retry later`);
}

export function timeLimit(ms: number): ApiError {
  return new ApiError(504, 'time_limit', `the request ran longer than its time limit of ${ms} ms and was stopped`);
}

export function bodyTooLarge(limit: number): ApiError {
  return new ApiError(413, 'body_too_large', `request body is larger than ${limit} bytes; expected at most ${limit}`, '$');
}

/**
 * Parses a JSON request body. On malformed text the error names the line and column of the first
 * problem (found by jsonc-parser in strict mode: no comments, no trailing commas).
 */
export function parseJsonBody(text: string): unknown {
  try {
    return JSON.parse(text);
  } catch {
    const errors: JsonError[] = [];
    parseTree(text, errors, { disallowComments: true, allowTrailingComma: false, allowEmptyContent: false });
    // jsonc-parser recovers from some slips JSON.parse refuses; fall back to the start of the text
    const first = errors.length > 0 ? errors[0] : null;
    const offset = first?.offset ?? 0;
    const { line, column } = lineColumn(text, offset);
    const what = first === null ? 'not valid JSON' : describeJsonError(printParseErrorCode(first.error));
    throw new ApiError(400, 'malformed_json', `request body:${line}:${column}: ${what} (at offset ${offset})`, `request body:${line}:${column}`, { line, column });
  }
}

/** jsonc-parser's codes (`PropertyNameExpected`) in words. */
function describeJsonError(code: string): string {
  const words = code.replace(/([a-z])([A-Z])/g, '$1 $2').toLowerCase();
  const m = /^(.*) expected$/.exec(words);
  return m ? `expected ${m[1]}` : words;
}
