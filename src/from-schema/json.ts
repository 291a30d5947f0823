/**
 * The schema document as an ordered JSON tree with offsets.
 *
 * `JSON.parse` loses two things this stage needs: the order in which object keys were written
 * (JavaScript puts integer-like keys such as "10" first, and the generated description writes
 * properties in the schema's order) and where each value stands in the file (every message names
 * `file:line:col` as well as the JSON path). jsonc-parser in strict mode (no comments, no trailing
 * commas) gives both; `JSON.parse` runs first so that exactly RFC 8259 texts are accepted.
 *
 * A schema given as a JavaScript value instead of text is converted the same way, without
 * offsets; its key order is JavaScript's (`Object.keys`).
 */
import { parseTree, type Node as JsoncNode, type ParseError as JsoncError } from 'jsonc-parser';
import type { Span } from '../description/ir.ts';
import { locateJsonError } from '../util/json.ts';

export type JsonValue = null | boolean | number | string | JsonValue[] | { [key: string]: JsonValue };

export type JsonNode =
  | { readonly type: 'object'; readonly entries: readonly JsonEntry[]; readonly span: Span | null }
  | { readonly type: 'array'; readonly items: readonly JsonNode[]; readonly span: Span | null }
  | { readonly type: 'string'; readonly value: string; readonly span: Span | null }
  | { readonly type: 'number'; readonly value: number; readonly span: Span | null }
  | { readonly type: 'boolean'; readonly value: boolean; readonly span: Span | null }
  | { readonly type: 'null'; readonly span: Span | null };

export interface JsonEntry {
  readonly key: string;
  readonly keySpan: Span | null;
  readonly value: JsonNode;
}

/** Limits on untrusted schema documents. */
export const MAX_SCHEMA_BYTES = 1 << 20;
export const MAX_NESTING = 128;

export type ParsedJson = { readonly node: JsonNode } | { readonly error: string; readonly span: Span };

/** Parses RFC 8259 text into an ordered tree; a duplicate key is an error (JSON.parse would keep the last). */
export function parseJsonText(text: string): ParsedJson {
  if (text.length > MAX_SCHEMA_BYTES) return { error: `the schema is larger than ${MAX_SCHEMA_BYTES} characters`, span: { start: 0, end: 1 } };
  try {
    JSON.parse(text);
  } catch {
    const where = locateJsonError(text);
    const at = where?.offset ?? 0;
    return { error: `malformed JSON: ${where?.message ?? 'not valid JSON'}`, span: { start: at, end: at + 1 } };
  }
  const errors: JsoncError[] = [];
  const root = parseTree(text, errors, { disallowComments: true, allowTrailingComma: false, allowEmptyContent: false });
  if (!root) return { error: 'malformed JSON: expected a value', span: { start: 0, end: 1 } };
  let problem: { error: string; span: Span } | null = null;
  const convert = (n: JsoncNode, depth: number): JsonNode => {
    const span = { start: n.offset, end: n.offset + n.length };
    if (depth > MAX_NESTING && problem === null) problem = { error: `the schema nests deeper than ${MAX_NESTING} levels`, span };
    switch (n.type) {
      case 'object': {
        const entries: JsonEntry[] = [];
        const seen = new Set<string>();
        for (const p of n.children ?? []) {
          const [k, v] = p.children!;
          const key = k!.value as string;
          const keySpan = { start: k!.offset, end: k!.offset + k!.length };
          if (seen.has(key) && problem === null) problem = { error: `duplicate key ${JSON.stringify(key)}`, span: keySpan };
          seen.add(key);
          entries.push({ key, keySpan, value: v ? convert(v, depth + 1) : { type: 'null', span: keySpan } });
        }
        return { type: 'object', entries, span };
      }
      case 'array':
        return { type: 'array', items: (n.children ?? []).map((c) => convert(c, depth + 1)), span };
      case 'string':
        return { type: 'string', value: n.value as string, span };
      case 'number':
        return { type: 'number', value: n.value as number, span };
      case 'boolean':
        return { type: 'boolean', value: n.value as boolean, span };
      default:
        return { type: 'null', span };
    }
  };
  const node = convert(root, 0);
  return problem ?? { node };
}

/** A JavaScript value (as JSON.parse would give) → tree without offsets; null when it is not JSON data. */
export function jsonNodeOf(value: unknown, depth = 0): JsonNode | null {
  if (depth > MAX_NESTING) return null;
  if (value === null) return { type: 'null', span: null };
  switch (typeof value) {
    case 'boolean':
      return { type: 'boolean', value, span: null };
    case 'number':
      return Number.isFinite(value) ? { type: 'number', value, span: null } : null;
    case 'string':
      return { type: 'string', value, span: null };
    case 'object': {
      if (Array.isArray(value)) {
        const items: JsonNode[] = [];
        for (const v of value) {
          const n = jsonNodeOf(v, depth + 1);
          if (n === null) return null;
          items.push(n);
        }
        return { type: 'array', items, span: null };
      }
      const proto = Object.getPrototypeOf(value);
      if (proto !== Object.prototype && proto !== null) return null;
      const entries: JsonEntry[] = [];
      for (const key of Object.keys(value)) {
        const n = jsonNodeOf((value as Record<string, unknown>)[key], depth + 1);
        if (n === null) return null;
        entries.push({ key, keySpan: null, value: n });
      }
      return { type: 'object', entries, span: null };
    }
    default:
      return null;
  }
}

/** The plain value of a node (objects in the node's key order, as far as JavaScript keeps it). */
export function valueOf(n: JsonNode): JsonValue {
  switch (n.type) {
    case 'object': {
      const o: { [key: string]: JsonValue } = {};
      for (const e of n.entries) o[e.key] = valueOf(e.value);
      return o;
    }
    case 'array':
      return n.items.map(valueOf);
    case 'null':
      return null;
    default:
      return n.value;
  }
}

/** The entry of `key` in an object node, or undefined. */
export function entry(n: JsonNode, key: string): JsonEntry | undefined {
  return n.type === 'object' ? n.entries.find((e) => e.key === key) : undefined;
}

/**
 * Equality of JSON values as JSON Schema defines it for `enum` and `const` (draft 2020-12 Core
 * §4.2.2): same type, numbers by value, objects regardless of key order.
 */
export function jsonEqual(a: JsonValue, b: JsonValue): boolean {
  if (a === b) return true;
  if (typeof a !== typeof b || a === null || b === null) return false;
  if (typeof a !== 'object') return false;
  if (Array.isArray(a) !== Array.isArray(b)) return false;
  if (Array.isArray(a)) {
    const bb = b as JsonValue[];
    return a.length === bb.length && a.every((x, i) => jsonEqual(x, bb[i]!));
  }
  const ao = a as { [key: string]: JsonValue };
  const bo = b as { [key: string]: JsonValue };
  const ak = Object.keys(ao);
  if (ak.length !== Object.keys(bo).length) return false;
  return ak.every((k) => Object.prototype.hasOwnProperty.call(bo, k) && jsonEqual(ao[k]!, bo[k]!));
}

/** The JSON type of a value as JSON Schema names it ("integer" for numbers with a zero fraction). */
export function jsonTypeOf(v: JsonValue): 'null' | 'boolean' | 'object' | 'array' | 'string' | 'integer' | 'number' {
  if (v === null) return 'null';
  if (Array.isArray(v)) return 'array';
  if (typeof v === 'number') return Number.isInteger(v) ? 'integer' : 'number';
  return typeof v as 'boolean' | 'object' | 'string';
}

/** A JSON Pointer fragment (RFC 6901) for a path of keys and indices: `#/properties/speed`. */
export function pointer(path: readonly (string | number)[]): string {
  return '#' + path.map((p) => '/' + String(p).replace(/~/g, '~0').replace(/\//g, '~1')).join('');
}
