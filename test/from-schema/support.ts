/**
 * Shared set-up for the from-schema suites: ajv (the reference validator for JSON Schema draft
 * 2020-12, with ajv-formats asserting `format`), compiled descriptions, and a writer that spells a
 * JSON value in the canonical key order a schema fixes.
 */
import { Ajv2020 } from 'ajv/dist/2020.js';
import addFormatsModule from 'ajv-formats';
import { compileDescription } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { fromSchema } from '../../src/from-schema/index.ts';
import { createParser, type Parser } from '../../src/tree/index.ts';

const addFormats = addFormatsModule as unknown as (ajv: Ajv2020) => Ajv2020;

/** A fresh ajv for draft 2020-12 with formats asserted (ajv-formats "full" mode). */
export function referenceValidator(strict = false): Ajv2020 {
  const ajv = new Ajv2020({ strict, allErrors: false, validateFormats: true });
  addFormats(ajv);
  return ajv;
}

export interface Generated {
  readonly text: string;
  readonly grammar: Grammar;
  readonly parser: Parser;
}

/** The description for a schema, compiled, with its parser. */
export function generate(schema: unknown, name = 'g'): Generated {
  const { text } = fromSchema(typeof schema === 'string' ? schema : JSON.stringify(schema), { name });
  const { grammar, diagnostics } = compileDescription(text, `${name}.twg`);
  if (!grammar || diagnostics.length > 0) throw new Error(`generated description does not compile cleanly:\n${text}\n${JSON.stringify(diagnostics)}`);
  return { text, grammar, parser: createParser(grammar) };
}

/** Does the description parse the text? */
export function parses(g: Generated, text: string): boolean {
  try {
    g.parser.parse(text);
    return true;
  } catch {
    return false;
  }
}

type Json = null | boolean | number | string | Json[] | { [k: string]: Json };
type Schema = boolean | { [k: string]: unknown };

/** JSON.stringify's spelling with raw white space as \uXXXX (the description's spelling of fixed strings). */
function str(s: string): string {
  return JSON.stringify(s).replace(/\s/gu, (ch) => '\\u' + ch.codePointAt(0)!.toString(16).padStart(4, '0'));
}

/**
 * Spellings of `value` in the layout the description prints (`{"a": 1, "b": [1, 2]}`), keys in the
 * order of the `properties` of each schema that could apply (through $ref, anyOf, oneOf), strings
 * with white space escaped and as JSON.stringify writes them; at most `cap` of them.
 */
export function canonicalTexts(value: Json, schema: Schema, root: Schema, cap = 16): string[] {
  const out = new Set<string>();
  const orders = keyOrders(schema, root, 0);
  const write = (v: Json, s: Schema): string[] => {
    // a string: the spelling of fixed strings, and JSON.stringify's own (strings with a pattern)
    if (v === null || typeof v !== 'object') return typeof v === 'string' ? [...new Set([str(v), JSON.stringify(v)])] : [JSON.stringify(v)];
    if (Array.isArray(v)) {
      let acc = [''];
      v.forEach((x, i) => {
        const sub = itemSchema(s, root, i);
        const next: string[] = [];
        for (const a of acc) for (const t of write(x, sub)) if (next.length < cap) next.push(a === '' && i === 0 ? t : `${a}, ${t}`);
        acc = next;
      });
      return acc.map((a) => `[${a}]`);
    }
    const texts: string[] = [];
    for (const order of keyOrders(s, root, 0)) {
      const keys = [...order.filter((k) => k in v), ...Object.keys(v).filter((k) => !order.includes(k))];
      let acc = [''];
      keys.forEach((k, i) => {
        const sub = propertySchema(s, root, k);
        const next: string[] = [];
        for (const a of acc) for (const t of write(v[k]!, sub)) if (next.length < cap) next.push(`${i === 0 ? '' : `${a}, `}${str(k)}: ${t}`);
        acc = next;
      });
      for (const a of acc) if (texts.length < cap) texts.push(`{${a}}`);
    }
    return texts.length > 0 ? texts : [`{${Object.keys(v).map((k) => `${str(k)}: ${write(v[k]!, true)[0]}`).join(', ')}}`];
  };
  void orders;
  for (const t of write(value, schema)) out.add(t);
  return [...out];
}

function resolve(s: Schema, root: Schema, depth: number): Schema[] {
  if (depth > 8 || typeof s === 'boolean') return [s];
  if (typeof s.$ref === 'string') {
    const ref = s.$ref;
    let node: unknown = root;
    if (ref !== '#') for (const seg of ref.slice(2).split('/')) node = (node as Record<string, unknown>)?.[decodeURIComponent(seg).replace(/~1/g, '/').replace(/~0/g, '~')];
    return node === undefined ? [s] : resolve(node as Schema, root, depth + 1);
  }
  const branches = (s.oneOf ?? s.anyOf) as Schema[] | undefined;
  if (Array.isArray(branches)) return branches.flatMap((b) => resolve(b, root, depth + 1));
  return [s];
}

function keyOrders(s: Schema, root: Schema, depth: number): string[][] {
  const orders: string[][] = [];
  for (const r of resolve(s, root, depth)) {
    if (typeof r === 'object' && r.properties && typeof r.properties === 'object') orders.push(Object.keys(r.properties));
    // a fixed object value (const, enum) is written in the key order the schema gives it
    if (typeof r === 'object') for (const c of [r.const, ...(Array.isArray(r.enum) ? r.enum : [])]) if (c !== null && typeof c === 'object' && !Array.isArray(c)) orders.push(Object.keys(c));
  }
  return orders.length > 0 ? orders : [[]];
}

function propertySchema(s: Schema, root: Schema, key: string): Schema {
  for (const r of resolve(s, root, 0)) {
    if (typeof r === 'object' && r.properties && typeof r.properties === 'object' && key in (r.properties as object)) return (r.properties as Record<string, Schema>)[key]!;
  }
  return true;
}

function itemSchema(s: Schema, root: Schema, i: number): Schema {
  for (const r of resolve(s, root, 0)) {
    if (typeof r !== 'object') continue;
    if (Array.isArray(r.prefixItems) && i < r.prefixItems.length) return r.prefixItems[i] as Schema;
    if (r.items !== undefined) return r.items as Schema;
  }
  return true;
}

/**
 * Why a value the schema accepts is outside the description, by the documented policies (README
 * "From a JSON Schema"), or null when no policy applies: a key outside `properties` of an object
 * without additionalProperties (closed), a number outside the digit policy, a lone surrogate, a
 * value whose type a schema without `type` does not imply.
 */
export function policyReason(value: Json, s: Schema, root: Schema, depth = 0): string | null {
  if (depth > 16) return null;
  for (const r of resolve(s, root, depth)) {
    if (typeof r === 'boolean') {
      const why = numbersOrStrings(value);
      if (why) return why;
      continue;
    }
    const why = reasonAt(value, r, root, depth);
    if (why) return why;
  }
  return null;
}

function numbersOrStrings(v: Json): string | null {
  if (typeof v === 'number') {
    const lex = JSON.stringify(v);
    if (/e/i.test(lex)) return `number ${lex} needs an exponent`;
    const [i, f = ''] = lex.replace('-', '').split('.');
    if (i!.length + f.length > 15 || f.length > 6) return `number ${lex} has more digits than the policy allows`;
    return null;
  }
  if (typeof v === 'string') return /\p{Cs}/u.test(v) ? 'lone surrogate' : null;
  if (Array.isArray(v)) return v.map(numbersOrStrings).find((x) => x) ?? null;
  if (v && typeof v === 'object') return Object.values(v).map(numbersOrStrings).find((x) => x) ?? null;
  return null;
}

function reasonAt(v: Json, r: { [k: string]: unknown }, root: Schema, depth: number): string | null {
  const t = v === null ? 'null' : Array.isArray(v) ? 'array' : typeof v === 'number' ? 'number' : typeof v;
  if (r.type === undefined && r.enum === undefined && r.const === undefined) {
    const implied = new Set<string>();
    if (['properties', 'required', 'additionalProperties'].some((k) => k in r)) implied.add('object');
    if (['items', 'prefixItems', 'minItems', 'maxItems'].some((k) => k in r)) implied.add('array');
    if (['minLength', 'maxLength', 'format', 'pattern'].some((k) => k in r)) implied.add('string');
    if (['minimum', 'maximum', 'exclusiveMinimum', 'exclusiveMaximum'].some((k) => k in r)) implied.add('number');
    if (implied.size > 0 && !implied.has(t)) return `type ${t} not implied by the keywords of a schema without "type"`;
  }
  if (r.enum !== undefined || r.const !== undefined) return null;
  if (t === 'number' || t === 'string') return numbersOrStrings(v);
  if (t === 'object') {
    const o = v as { [k: string]: Json };
    const props = (r.properties ?? {}) as Record<string, Schema>;
    if (r.additionalProperties === undefined) for (const k of Object.keys(o)) if (!(k in props)) return `key ${JSON.stringify(k)} on an object without additionalProperties`;
    for (const k of Object.keys(o)) {
      const why = policyReason(o[k]!, props[k] ?? true, root, depth + 1);
      if (why) return why;
    }
  }
  if (t === 'array') {
    const a = v as Json[];
    for (let i = 0; i < a.length; i++) {
      const why = policyReason(a[i]!, itemSchema(r, root, i), root, depth + 1);
      if (why) return why;
    }
  }
  return null;
}
