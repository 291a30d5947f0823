/**
 * The server's error catalogue: every failure a route reports is an ApiError, sent as
 * `{"error": {"code", "message", "location"?, "line"?, "column"?}}` with its HTTP status.
 * `location` is `file:line:col` (a description, a program text) or a JSON path into the request
 * body (`$.tree.left`); `line`/`column` repeat the position for clients that mark it.
 */
import { jsonDepthProblem, MAX_JSON_DEPTH, tooDeepMessage } from '../util/depth.ts';
import { locateJsonError, pointerToPath, show } from '../util/json.ts';

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
 * problem and what was expected there (src/util/json.ts: jsonc-parser in strict mode).
 */
export function parseJsonBody(text: string): unknown {
  try {
    return JSON.parse(text);
  } catch {
    // jsonc-parser accepts a few texts JSON.parse refuses; then the start of the text is named
    const at = locateJsonError(text) ?? { offset: 0, line: 1, column: 1, message: 'not valid JSON' };
    const where = `request body:${at.line}:${at.column}`;
    throw new ApiError(400, 'malformed_json', `${where}: ${at.message} (at offset ${at.offset})`, where, { line: at.line, column: at.column });
  }
}

/**
 * Refuses a parsed body nested more than MAX_JSON_DEPTH deep (400 at the JSON path of the first
 * value too deep), before schema validation, routes or error messages recurse into it.
 */
export function checkBodyDepth(body: unknown): unknown {
  const path = jsonDepthProblem(body, MAX_JSON_DEPTH);
  if (path !== null) throw new ApiError(400, 'too_deep', `${path}: ${tooDeepMessage(MAX_JSON_DEPTH)}`, path);
  return body;
}

/** A request body was empty. */
export function emptyBody(): ApiError {
  return new ApiError(400, 'malformed_json', 'request body:1:1: empty; expected a JSON object', 'request body:1:1', { line: 1, column: 1 });
}

/** A content type other than JSON. */
export function unsupportedMediaType(type: string): ApiError {
  return new ApiError(415, 'unsupported_media_type', `request body: content type ${show(type)}; expected application/json`, '$');
}

/** One issue of fastify's schema validation (ajv). */
export interface AjvIssue {
  instancePath: string;
  keyword: string;
  message?: string;
  params: Record<string, unknown>;
}

/** The value at a JSON Pointer of `value` (undefined when there is none). */
function at(value: unknown, pointer: string): unknown {
  let v = value;
  for (const raw of pointer.split('/').slice(1)) {
    if (v === null || typeof v !== 'object') return undefined;
    v = (v as Record<string, unknown>)[raw.replace(/~1/g, '/').replace(/~0/g, '~')];
  }
  return v;
}

/** A request body the route's JSON Schema refused: 400 at the field's JSON path, saying what was expected. */
export function validationError(issue: AjvIssue, body: unknown): ApiError {
  if (issue.keyword === 'required') {
    const path = pointerToPath(`${issue.instancePath}/${String(issue.params.missingProperty)}`);
    return new ApiError(400, 'invalid_request', `${path}: missing; expected a value for the required field`, path);
  }
  if (issue.keyword === 'additionalProperties') {
    const path = pointerToPath(`${issue.instancePath}/${String(issue.params.additionalProperty)}`);
    return new ApiError(400, 'invalid_request', `${path}: unknown field; expected only the fields the API describes (GET /api/openapi.json)`, path);
  }
  const path = pointerToPath(issue.instancePath);
  const p = issue.params;
  const article = (t: string) => (/^[aeiou]/.test(t) ? `an ${t}` : `a ${t}`);
  const expected =
    issue.keyword === 'type' ? String(p.type).split(',').map(article).join(' or ')
    : issue.keyword === 'maxLength' ? `a string of at most ${p.limit} characters`
    : issue.keyword === 'minLength' ? `a string of at least ${p.limit} character${p.limit === 1 ? '' : 's'}`
    : issue.keyword === 'maxItems' ? `at most ${p.limit} items`
    : issue.keyword === 'maximum' || issue.keyword === 'minimum' || issue.keyword === 'exclusiveMaximum' || issue.keyword === 'exclusiveMinimum' ? `a number ${p.comparison} ${p.limit}`
    : issue.keyword === 'enum' ? `one of ${(p.allowedValues as unknown[]).map((v) => JSON.stringify(v)).join(', ')}`
    : (issue.message ?? 'a valid value').replace(/^must (be )?/, '');
  return new ApiError(400, 'invalid_request', `${path}: found ${show(at(body, issue.instancePath))}; expected ${expected}`, path);
}
