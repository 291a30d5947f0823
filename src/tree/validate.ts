/**
 * JSON trees and their validation ("well-typed").
 *
 * A node is `{"kind": CONSTRUCTOR, FIELD: VALUE, ...}` with every field of the constructor present
 * and no other key: optional fields are null when absent, lists are arrays, token fields are
 * strings or numbers by the class's `as` kind, name-set fields are strings. A well-typed tree of a
 * grammar with scopes or kinds must also resolve (resolve.ts): its first issue is reported.
 */
import type { Constructor, Field, Grammar, NameBindings } from '../description/ir.ts';
import { grammarInfo, type GrammarInfo } from './info.ts';
import { nameSpellingProblem, tokenValueProblem } from './lexeme.ts';
import { resolveTree } from './resolve.ts';
import { jsonDepthProblem, MAX_JSON_DEPTH, tooDeepMessage } from '../util/depth.ts';
import { pathKey, show } from '../util/json.ts';

import type { Tree, TreeValue } from './node.ts';

export type { Tree, TreeValue };

/** The first problem found: a JSON path into the checked value and what was expected there. */
export interface TreeIssue {
  readonly path: string;
  readonly message: string;
}

export interface ValidateOptions {
  /** when given, name-set fields of a bound set must be members (sets not listed are unchecked) */
  readonly names?: NameBindings;
  /** the sort the value must have (default: the grammar's start sort) */
  readonly sort?: string;
  /** check scopes and kinds too (resolve.ts); default true */
  readonly resolve?: boolean;
}

/** Thrown by the printer and other consumers for an invalid tree; `message` is `path: message`. */
export class TreeError extends Error {
  readonly issue: TreeIssue;
  constructor(issue: TreeIssue) {
    super(`${issue.path}: ${issue.message}`);
    this.name = 'TreeError';
    this.issue = issue;
  }
}

/**
 * Checks `value` against the grammar; returns the first problem (depth-first, field order) or null.
 * A value nested more than MAX_JSON_DEPTH arrays/objects deep is a problem at its deepest path.
 */
export function validateTree(grammar: Grammar, value: unknown, opts: ValidateOptions = {}): TreeIssue | null {
  const info = grammarInfo(grammar);
  const sort = opts.sort ?? grammar.start;
  if (!info.sort.has(sort)) return { path: '$', message: `unknown sort ${sort}` };
  // the checks below recurse once per level: deeper values are refused first (src/util/depth.ts)
  const deep = jsonDepthProblem(value, MAX_JSON_DEPTH);
  if (deep !== null) return { path: deep, message: tooDeepMessage(MAX_JSON_DEPTH) };
  const issue = checkNode(info, opts.names, value, sort, '$', []);
  if (issue !== null || !grammar.scoped || opts.resolve === false) return issue;
  const first = resolveTree(grammar, value as Tree, opts.names)[0];
  return first === undefined ? null : { path: first.path, message: first.message };
}

/** Throws TreeError when validateTree finds a problem. */
export function assertTree(grammar: Grammar, value: unknown, opts: ValidateOptions = {}): asserts value is Tree {
  const issue = validateTree(grammar, value, opts);
  if (issue !== null) throw new TreeError(issue);
}

function checkNode(
  info: GrammarInfo,
  names: NameBindings | undefined,
  value: unknown,
  sort: string,
  path: string,
  scope: readonly string[],
): TreeIssue | null {
  if (value === null || typeof value !== 'object' || Array.isArray(value)) {
    return { path, message: `expected ${sort}, got ${show(value)}` };
  }
  const node = value as Record<string, unknown>;
  const kind = node.kind;
  if (typeof kind !== 'string') {
    return { path: pathKey(path, 'kind'), message: `expected the name of a constructor of ${sort}, got ${show(kind)}` };
  }
  const ctor = info.ctor.get(kind);
  if (ctor === undefined || ctor.sort !== sort) {
    const choices = info.sort.get(sort)!.constructors.join(', ');
    const what = ctor === undefined ? 'which is not a constructor' : `a constructor of ${ctor.sort}`;
    return { path: pathKey(path, 'kind'), message: `expected ${sort} (one of ${choices}), got ${JSON.stringify(kind)}, ${what}` };
  }
  for (const key of Object.keys(node)) {
    if (key !== 'kind' && info.field(kind, key) === undefined) {
      return { path: pathKey(path, key), message: `${kind} has no field ${JSON.stringify(key)}` };
    }
  }
  let inScope = scope;
  for (const field of ctor.fields) {
    const fpath = pathKey(path, field.name);
    if (!Object.prototype.hasOwnProperty.call(node, field.name)) {
      return { path, message: `missing field ${JSON.stringify(field.name)} of ${kind}` };
    }
    const issue = checkField(info, names, ctor, field, node[field.name], fpath, inScope);
    if (issue !== null) return issue;
    if (field.scoping === 'binds') inScope = inScope.concat(boundValues(node[field.name]));
  }
  return null;
}

function boundValues(v: unknown): string[] {
  if (typeof v === 'string') return [v];
  if (Array.isArray(v)) return v.filter((x): x is string => typeof x === 'string');
  return [];
}

function checkField(
  info: GrammarInfo,
  names: NameBindings | undefined,
  ctor: Constructor,
  field: Field,
  value: unknown,
  path: string,
  scope: readonly string[],
): TreeIssue | null {
  const what = typeWords(field);
  switch (field.card) {
    case 'one':
      return checkElement(info, names, field, value, path, scope);
    case 'optional':
      return value === null ? null : checkElement(info, names, field, value, path, scope);
    case 'list':
    case 'nonempty': {
      if (!Array.isArray(value)) return { path, message: `expected a list of ${what}, got ${show(value)}` };
      if (field.card === 'nonempty' && value.length === 0) {
        return { path, message: `expected at least one ${what} (field ${field.name} of ${ctor.name} is non-empty)` };
      }
      for (let i = 0; i < value.length; i++) {
        const issue = checkElement(info, names, field, value[i], `${path}[${i}]`, scope);
        if (issue !== null) return issue;
      }
      return null;
    }
  }
}

function typeWords(field: Field): string {
  return field.type.name;
}

function checkElement(
  info: GrammarInfo,
  names: NameBindings | undefined,
  field: Field,
  value: unknown,
  path: string,
  scope: readonly string[],
): TreeIssue | null {
  const type = field.type;
  switch (type.kind) {
    case 'sort':
      return checkNode(info, names, value, type.name, path, scope);
    case 'token': {
      const tok = info.token.get(type.name)!;
      const problem = tokenValueProblem(tok, value);
      if (problem !== null) return { path, message: problem.startsWith('expected') ? `${problem}, got ${show(value)}` : problem };
      if (field.scoping === 'bound' && !scope.includes(value as string)) {
        return { path, message: `unbound variable '${String(value)}'` };
      }
      return null;
    }
    case 'names': {
      const set = info.nameSet.get(type.name)!;
      const tok = info.token.get(set.token)!;
      if (typeof value !== 'string') return { path, message: `expected a ${type.name} name (a string), got ${show(value)}` };
      const problem = nameSpellingProblem(tok, value);
      if (problem !== null) return { path, message: problem };
      const members = names?.[type.name];
      if (members !== undefined && !members.includes(value)) {
        return { path, message: `unknown name '${value}' for ${type.name}` };
      }
      return null;
    }
  }
}
