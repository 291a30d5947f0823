/**
 * Schema document → `Sem`, one node per schema location, holding exactly what the keywords of the
 * supported subset say (the schema's own meaning, before any policy of the generated description).
 * Every keyword outside the subset, and every keyword value of the wrong form, becomes an error
 * naming its JSON path; reading goes on so that one run reports them all.
 *
 * `$ref` targets are read on first use (`Reader.resolve`), so recursive schemas are fine and
 * `$defs` nobody refers to are not read at all (they cannot change what the schema accepts).
 */
import type { Span } from '../description/ir.ts';
import * as E from './errors.ts';
import type { SchemaDiagnostic } from './errors.ts';
import { entry, jsonEqual, jsonTypeOf, pointer, valueOf, type JsonNode, type JsonValue } from './json.ts';
import { DATE_RAW, DATE_TIME_RAW, EMAIL_RAW } from './lexemes.ts';
import { searchIr } from './pattern.ts';
import { buildByteDfa, longestMatch, RegexTooLargeError, type ByteDfa, type Rx } from '../description/regex/index.ts';

export const TYPE_NAMES = ['null', 'boolean', 'object', 'array', 'string', 'integer', 'number'] as const;
export type TypeName = (typeof TYPE_NAMES)[number];
export type Format = 'date' | 'date-time' | 'email';

export interface Loc {
  /** JSON Pointer fragment of the schema location */
  readonly path: string;
  readonly span: Span | null;
  readonly title: string | null;
  readonly description: string | null;
  /** where each keyword of this schema object stands (for messages about one keyword) */
  readonly keys: ReadonlyMap<string, Span | null>;
}

export interface ObjSem {
  readonly props: readonly { readonly key: string; readonly keySpan: Span | null; readonly sem: Sem }[];
  readonly required: readonly string[];
  /** `additionalProperties: false` was written (else it was absent: the schema allows other keys) */
  readonly closed: boolean;
}

export interface ArrSem {
  readonly prefix: readonly Sem[];
  /** the schema of items after the prefix; `null` when `items` is absent (any value) */
  readonly items: Sem | null;
  readonly min: number;
  readonly max: number | null;
}

export interface StrSem {
  readonly min: number;
  readonly max: number | null;
  readonly format: Format | null;
  /** `pattern`: its source and the IR of the strings it finds a match in (pattern.ts) */
  readonly pattern: Pattern | null;
}

export interface Pattern {
  readonly source: string;
  readonly rx: Rx;
}

export interface NumSem {
  readonly minimum: number | null;
  readonly exclusiveMinimum: number | null;
  readonly maximum: number | null;
  readonly exclusiveMaximum: number | null;
}

export type Sem =
  | { readonly k: 'true'; readonly loc: Loc }
  | { readonly k: 'false'; readonly loc: Loc }
  | { readonly k: 'ref'; readonly loc: Loc; readonly target: string }
  | { readonly k: 'union'; readonly loc: Loc; readonly exclusive: boolean; readonly branches: readonly Sem[]; readonly types: readonly TypeName[] | null }
  | { readonly k: 'enum'; readonly loc: Loc; readonly values: readonly JsonValue[] }
  | {
      readonly k: 'typed';
      readonly loc: Loc;
      /** the `type` keyword, or null when absent */
      readonly types: readonly TypeName[] | null;
      /** when `type` is absent: the types its other keywords imply (policy), or null for "any value" */
      readonly inferred: readonly TypeName[] | null;
      /** the keywords `inferred` comes from */
      readonly inferredFrom: readonly string[];
      readonly obj: ObjSem;
      readonly arr: ArrSem;
      readonly str: StrSem;
      readonly num: NumSem;
    };

const ANNOTATIONS = new Set(['title', 'description', '$comment', 'examples', 'default', 'deprecated', 'readOnly', 'writeOnly']);
const OBJECT_KW = ['properties', 'required', 'additionalProperties'];
const ARRAY_KW = ['items', 'prefixItems', 'minItems', 'maxItems'];
const STRING_KW = ['minLength', 'maxLength', 'format', 'pattern'];
const NUMBER_KW = ['minimum', 'maximum', 'exclusiveMinimum', 'exclusiveMaximum'];
const VALUE_KW = ['type', 'enum', 'const', ...OBJECT_KW, ...ARRAY_KW, ...STRING_KW, ...NUMBER_KW];
const STRUCTURE_KW = ['$schema', '$id', '$defs', '$ref', 'anyOf', 'oneOf'];
const SUPPORTED = new Set([...ANNOTATIONS, ...VALUE_KW, ...STRUCTURE_KW]);
/** Keywords of draft 2020-12 we know and refuse (a typo of one of them is worth a suggestion). */
const KNOWN = [...SUPPORTED, 'allOf', 'not', 'if', 'then', 'else', 'dependentSchemas', 'dependentRequired', 'patternProperties', 'propertyNames', 'unevaluatedProperties', 'unevaluatedItems', 'contains', 'minContains', 'maxContains', 'uniqueItems', 'minProperties', 'maxProperties', 'multipleOf', 'pattern', '$anchor', '$dynamicRef', '$dynamicAnchor', '$vocabulary', 'contentEncoding', 'contentMediaType', 'contentSchema'];

export const DIALECT = 'https://json-schema.org/draft/2020-12/schema';

/** Limits on what one schema may ask for (each a located error past it). */
export const LIMITS = { enumValues: 1000, maxLength: 256, positions: 256, properties: 500 } as const;

export type Verdict = 'yes' | 'no' | 'maybe';

/** Reads a schema document; `resolve` gives the Sem of any `#…` pointer (read once). */
export class Reader {
  readonly diagnostics: SchemaDiagnostic[] = [];
  private readonly byPointer = new Map<string, Sem>();
  private readonly reading = new Set<string>();

  constructor(readonly root: JsonNode) {}

  /** The Sem of the whole document. */
  readRoot(): Sem {
    const s = this.root;
    if (s.type === 'object') {
      const dialect = entry(s, '$schema');
      if (dialect) {
        const uri = dialect.value.type === 'string' ? dialect.value.value : null;
        if (uri === null || uri.replace(/#$/, '') !== DIALECT) this.diagnostics.push(E.wrongDialect('#/$schema', dialect.value.span, uri ?? JSON.stringify(valueOf(dialect.value))));
      }
    }
    return this.resolve('#', null)!;
  }

  /** The Sem at a `#…` pointer, or null (with an error at `from`) when it points to nothing. */
  resolve(ref: string, from: { path: string; span: Span | null } | null): Sem | null {
    const key = canonicalPointer(ref);
    const known = this.byPointer.get(key);
    if (known) return known;
    const node = this.nodeAt(ref);
    if (node === null) {
      if (from) this.diagnostics.push(E.unresolvedRef(from.path, from.span, ref));
      return null;
    }
    this.reading.add(key);
    const sem = this.read(node.node, node.path);
    this.reading.delete(key);
    this.byPointer.set(key, sem);
    return sem;
  }

  /** True while the schema at `ref` is being read (a ref to it then closes a cycle). */
  isReading(ref: string): boolean {
    return this.reading.has(canonicalPointer(ref));
  }

  private nodeAt(ref: string): { node: JsonNode; path: (string | number)[] } | null {
    if (!ref.startsWith('#')) return null;
    if (ref === '#' || ref === '#/') return ref === '#' ? { node: this.root, path: [] } : null;
    if (!ref.startsWith('#/')) return null;
    let node: JsonNode = this.root;
    const path: (string | number)[] = [];
    for (const raw of ref.slice(2).split('/')) {
      let seg: string;
      try {
        seg = decodeURIComponent(raw).replace(/~1/g, '/').replace(/~0/g, '~');
      } catch {
        return null;
      }
      if (node.type === 'object') {
        const e = entry(node, seg);
        if (!e) return null;
        node = e.value;
        path.push(seg);
      } else if (node.type === 'array' && /^(0|[1-9][0-9]*)$/.test(seg) && Number(seg) < node.items.length) {
        node = node.items[Number(seg)]!;
        path.push(Number(seg));
      } else return null;
    }
    return { node, path };
  }

  private read(node: JsonNode, at: (string | number)[]): Sem {
    const path = pointer(at);
    const span = node.span;
    if (node.type === 'boolean') return { k: node.value ? 'true' : 'false', loc: { path, span, title: null, description: null, keys: new Map() } };
    if (node.type !== 'object') {
      this.diagnostics.push(E.notASchema(path, span));
      return { k: 'false', loc: { path, span, title: null, description: null, keys: new Map() } };
    }
    const get = (k: string) => entry(node, k);
    const str = (k: string) => {
      const e = get(k);
      return e && e.value.type === 'string' ? e.value.value : null;
    };
    const loc: Loc = { path, span, title: str('title'), description: str('description'), keys: new Map(node.entries.map((e) => [e.key, e.keySpan])) };
    const bad = (k: string, expected: string) => this.diagnostics.push(E.badKeywordValue(pointer([...at, k]), get(k)!.value.span, expected));

    // ---- which keywords
    const present = new Set<string>();
    for (const e of node.entries) {
      const kp = pointer([...at, e.key]);
      if (!SUPPORTED.has(e.key)) {
        this.diagnostics.push(E.unsupportedKeyword(kp, e.keySpan, suggestKeyword(e.key)));
        continue;
      }
      if (e.key === '$id' && at.length > 0) {
        this.diagnostics.push(E.embeddedResource(kp, e.keySpan));
        continue;
      }
      if (e.key === '$schema' && at.length > 0) {
        const v = e.value.type === 'string' ? e.value.value.replace(/#$/, '') : null;
        if (v !== DIALECT) this.diagnostics.push(E.wrongDialect(kp, e.value.span, v ?? JSON.stringify(valueOf(e.value))));
        continue;
      }
      present.add(e.key);
    }
    if (present.has('$defs')) {
      const defs = get('$defs')!.value;
      if (defs.type !== 'object') bad('$defs', 'an object of schemas');
      // every definition is read (once), referenced or not: a problem in one is reported too
      else for (const d of defs.entries) this.resolve(refTo([...at, '$defs', d.key]), null);
    }
    for (const k of ['title', 'description', '$comment']) if (present.has(k) && get(k)!.value.type !== 'string') bad(k, 'a string');

    // ---- $ref
    if (present.has('$ref')) {
      const e = get('$ref')!;
      const others = [...present].filter((k) => !ANNOTATIONS.has(k) && k !== '$ref' && k !== '$defs' && k !== '$schema' && k !== '$id');
      if (others.length > 0) this.diagnostics.push(E.refWithSiblings(pointer([...at, '$ref']), e.keySpan, others));
      if (e.value.type !== 'string') {
        bad('$ref', 'a string');
        return { k: 'false', loc };
      }
      const ref = e.value.value;
      if (!ref.startsWith('#')) {
        this.diagnostics.push(E.externalRef(pointer([...at, '$ref']), e.value.span, ref));
        return { k: 'false', loc };
      }
      if (this.nodeAt(ref) === null) {
        this.diagnostics.push(E.unresolvedRef(pointer([...at, '$ref']), e.value.span, ref));
        return { k: 'false', loc };
      }
      return { k: 'ref', loc, target: ref };
    }

    // ---- type
    let types: TypeName[] | null = null;
    if (present.has('type')) {
      const v = get('type')!.value;
      const names = v.type === 'string' ? [v.value] : v.type === 'array' && v.items.length > 0 && v.items.every((x) => x.type === 'string') ? v.items.map((x) => (x as { value: string }).value) : null;
      if (names === null || names.some((n) => !(TYPE_NAMES as readonly string[]).includes(n)) || new Set(names).size !== names.length) {
        bad('type', `one of ${TYPE_NAMES.map((t) => JSON.stringify(t)).join(', ')} or a non-empty array of them without repeats`);
      } else types = names as TypeName[];
    }

    // ---- anyOf / oneOf
    const combinator = present.has('oneOf') ? 'oneOf' : present.has('anyOf') ? 'anyOf' : null;
    if (combinator !== null) {
      if (present.has('oneOf') && present.has('anyOf')) this.diagnostics.push(E.bothCombinators(path, span));
      const others = [...present].filter((k) => VALUE_KW.includes(k) && k !== 'type');
      if (others.length > 0) this.diagnostics.push(E.combinatorWithSiblings(pointer([...at, combinator]), get(combinator)!.keySpan, combinator, others));
      const v = get(combinator)!.value;
      if (v.type !== 'array' || v.items.length === 0) {
        bad(combinator, 'a non-empty array of schemas');
        return { k: 'false', loc };
      }
      const branches = v.items.map((b, i) => this.read(b, [...at, combinator, i]));
      return { k: 'union', loc, exclusive: combinator === 'oneOf', branches, types };
    }

    // ---- per-type keywords
    const nonNegative = (k: string): number | null => {
      if (!present.has(k)) return null;
      const v = get(k)!.value;
      if (v.type !== 'number' || !Number.isSafeInteger(v.value) || v.value < 0) {
        bad(k, 'a non-negative integer');
        return null;
      }
      return v.value;
    };
    const numberKw = (k: string): number | null => {
      if (!present.has(k)) return null;
      const v = get(k)!.value;
      if (v.type !== 'number') {
        bad(k, 'a number');
        return null;
      }
      return v.value;
    };
    const schemaAt = (k: string): Sem | null => (present.has(k) ? this.read(get(k)!.value, [...at, k]) : null);

    // object
    const props: { key: string; keySpan: Span | null; sem: Sem }[] = [];
    if (present.has('properties')) {
      const v = get('properties')!.value;
      if (v.type !== 'object') bad('properties', 'an object of schemas');
      else {
        if (v.entries.length > LIMITS.properties) this.diagnostics.push(E.tooLarge(pointer([...at, 'properties']), v.span, `${v.entries.length} properties`, LIMITS.properties));
        for (const e of v.entries) props.push({ key: e.key, keySpan: e.keySpan, sem: this.read(e.value, [...at, 'properties', e.key]) });
      }
    }
    let required: string[] = [];
    if (present.has('required')) {
      const v = get('required')!.value;
      if (v.type !== 'array' || v.items.some((x) => x.type !== 'string') || new Set(v.items.map((x) => (x as { value: string }).value)).size !== v.items.length) {
        bad('required', 'an array of distinct strings');
      } else required = v.items.map((x) => (x as { value: string }).value);
    }
    let closed = false;
    if (present.has('additionalProperties')) {
      const v = get('additionalProperties')!.value;
      if (v.type === 'boolean' && !v.value) closed = true;
      else this.diagnostics.push(E.additionalPropertiesNotFalse(pointer([...at, 'additionalProperties']), v.span));
    }
    // array
    const prefix: Sem[] = [];
    if (present.has('prefixItems')) {
      const v = get('prefixItems')!.value;
      if (v.type !== 'array' || v.items.length === 0) bad('prefixItems', 'a non-empty array of schemas');
      else v.items.forEach((x, i) => prefix.push(this.read(x, [...at, 'prefixItems', i])));
    }
    const items = schemaAt('items');
    const minItems = nonNegative('minItems') ?? 0;
    const maxItems = nonNegative('maxItems');
    // string
    const minLength = nonNegative('minLength') ?? 0;
    const maxLength = nonNegative('maxLength');
    let format: Format | null = null;
    if (present.has('format')) {
      const v = get('format')!.value;
      if (v.type !== 'string') bad('format', 'a string');
      else if (v.value === 'date' || v.value === 'date-time' || v.value === 'email') format = v.value;
      else this.diagnostics.push(E.unknownFormat(pointer([...at, 'format']), v.span, v.value));
    }
    let pattern: Pattern | null = null;
    if (present.has('pattern')) {
      const v = get('pattern')!.value;
      if (v.type !== 'string') bad('pattern', 'a string (an ECMAScript regular expression)');
      else {
        const rx = searchIr(v.value);
        if ('code' in rx) this.diagnostics.push(E.badPattern(pointer([...at, 'pattern']), v.span, rx.code === 'bad-regex', rx.message, rx.offset));
        else pattern = { source: v.value, rx };
      }
    }
    // number
    const num: NumSem = {
      minimum: numberKw('minimum'),
      exclusiveMinimum: numberKw('exclusiveMinimum'),
      maximum: numberKw('maximum'),
      exclusiveMaximum: numberKw('exclusiveMaximum'),
    };

    let inferred: TypeName[] | null = null;
    let inferredFrom: string[] = [];
    if (types === null) {
      const from = (ks: string[]) => ks.filter((k) => present.has(k));
      const families: [TypeName, string[]][] = [
        ['object', from(OBJECT_KW)],
        ['array', from(ARRAY_KW)],
        ['string', from(STRING_KW)],
        ['number', from(NUMBER_KW)],
      ];
      const hit = families.filter(([, ks]) => ks.length > 0);
      if (hit.length > 0) {
        inferred = hit.map(([t]) => t);
        inferredFrom = hit.flatMap(([, ks]) => ks);
      }
    }
    const typed: Sem = {
      k: 'typed',
      loc,
      types,
      inferred,
      inferredFrom,
      obj: { props, required, closed },
      arr: { prefix, items, min: minItems, max: maxItems },
      str: { min: minLength, max: maxLength, format, pattern },
      num,
    };

    // ---- enum / const: the listed values that the other keywords accept
    if (present.has('enum') || present.has('const')) {
      let values: JsonValue[] | null = null;
      if (present.has('enum')) {
        const v = get('enum')!.value;
        if (v.type !== 'array') bad('enum', 'an array');
        else {
          if (v.items.length > LIMITS.enumValues) this.diagnostics.push(E.tooLarge(pointer([...at, 'enum']), v.span, `${v.items.length} values`, LIMITS.enumValues));
          values = [];
          for (const x of v.items.map(valueOf)) if (!values.some((y) => jsonEqual(x, y))) values.push(x);
        }
      }
      if (present.has('const')) {
        const c = valueOf(get('const')!.value);
        values = values === null ? [c] : values.filter((x) => jsonEqual(x, c));
      }
      const rest: Sem = { ...typed, inferred: null };
      const kept: JsonValue[] = [];
      for (const x of values ?? []) {
        const verdict = this.accepts(rest, x, 0);
        if (verdict === 'yes') kept.push(x);
        else if (verdict === 'maybe') this.diagnostics.push(E.enumValueUnchecked(path, span, JSON.stringify(x)));
      }
      return { k: 'enum', loc, values: kept };
    }
    return typed;
  }

  /**
   * Does the schema (its own meaning, as a validator such as ajv reads it, with formats asserted)
   * accept `v`? 'maybe' where this stage cannot decide (date-time spellings outside RFC 3339's
   * grammar that a validator might still take; a reference still being read).
   */
  accepts(sem: Sem, v: JsonValue, depth: number): Verdict {
    if (depth > 64) return 'maybe';
    switch (sem.k) {
      case 'true':
        return 'yes';
      case 'false':
        return 'no';
      case 'ref': {
        if (this.isReading(sem.target)) return 'maybe';
        const t = this.resolve(sem.target, null);
        return t === null ? 'no' : this.accepts(t, v, depth + 1);
      }
      case 'enum':
        return sem.values.some((x) => jsonEqual(x, v)) ? 'yes' : 'no';
      case 'union': {
        if (sem.types !== null && !typeMatches(sem.types, v)) return 'no';
        const rs = sem.branches.map((b) => this.accepts(b, v, depth + 1));
        const yes = rs.filter((r) => r === 'yes').length;
        const maybe = rs.filter((r) => r === 'maybe').length;
        if (!sem.exclusive) return yes > 0 ? 'yes' : maybe > 0 ? 'maybe' : 'no';
        if (yes > 1) return 'no';
        if (maybe > 0) return 'maybe';
        return yes === 1 ? 'yes' : 'no';
      }
      case 'typed':
        return this.typedAccepts(sem, v, depth);
    }
  }

  private typedAccepts(sem: Extract<Sem, { k: 'typed' }>, v: JsonValue, depth: number): Verdict {
    if (sem.types !== null && !typeMatches(sem.types, v)) return 'no';
    const all = (rs: Verdict[]): Verdict => (rs.includes('no') ? 'no' : rs.includes('maybe') ? 'maybe' : 'yes');
    const t = jsonTypeOf(v);
    if (t === 'object') {
      const o = v as { [key: string]: JsonValue };
      const rs: Verdict[] = [];
      for (const r of sem.obj.required) if (!Object.prototype.hasOwnProperty.call(o, r)) return 'no';
      for (const k of Object.keys(o)) {
        const p = sem.obj.props.find((q) => q.key === k);
        if (p) rs.push(this.accepts(p.sem, o[k]!, depth + 1));
        else if (sem.obj.closed) return 'no';
      }
      return all(rs);
    }
    if (t === 'array') {
      const a = v as JsonValue[];
      if (a.length < sem.arr.min || (sem.arr.max !== null && a.length > sem.arr.max)) return 'no';
      return all(a.map((x, i) => (i < sem.arr.prefix.length ? this.accepts(sem.arr.prefix[i]!, x, depth + 1) : sem.arr.items === null ? 'yes' : this.accepts(sem.arr.items, x, depth + 1))));
    }
    if (t === 'string') {
      const s = v as string;
      const n = [...s].length; // code points, as JSON Schema counts string length (2020-12 Validation §6.3.1)
      if (n < sem.str.min || (sem.str.max !== null && n > sem.str.max)) return 'no';
      if (sem.str.pattern !== null) {
        const found = patternFinds(sem.str.pattern, s);
        if (found !== 'yes') return found;
      }
      switch (sem.str.format) {
        case null:
          return 'yes';
        case 'date':
          return new RegExp(`^(?:${DATE_RAW})$`).test(s) ? 'yes' : 'no';
        case 'email':
          return new RegExp(`^(?:${EMAIL_RAW})$`).test(s) ? 'yes' : 'no';
        case 'date-time':
          return new RegExp(`^(?:${DATE_TIME_RAW})$`).test(s) ? 'yes' : 'maybe';
      }
    }
    if (t === 'integer' || t === 'number') {
      const x = v as number;
      const { minimum, exclusiveMinimum, maximum, exclusiveMaximum } = sem.num;
      if (minimum !== null && x < minimum) return 'no';
      if (exclusiveMinimum !== null && x <= exclusiveMinimum) return 'no';
      if (maximum !== null && x > maximum) return 'no';
      if (exclusiveMaximum !== null && x >= exclusiveMaximum) return 'no';
      return 'yes';
    }
    return 'yes';
  }
}

const patternDfas = new WeakMap<Pattern, ByteDfa | null>();

/**
 * Does the pattern find a match in `s`? Decided on the front-end's automaton (linear in `s`, so a
 * hostile pattern cannot make this hang); 'maybe' when the automaton is too large to build or `s`
 * holds a lone surrogate (no JSON text decodes to one in a valid document).
 */
export function patternFinds(p: Pattern, s: string): Verdict {
  let dfa = patternDfas.get(p);
  if (dfa === undefined) {
    try {
      dfa = buildByteDfa({ rx: p.rx, unicode: true });
    } catch (err) {
      if (!(err instanceof RegexTooLargeError)) throw err;
      dfa = null;
    }
    patternDfas.set(p, dfa);
  }
  if (dfa === null || /\p{Cs}/u.test(s)) return 'maybe';
  return longestMatch(dfa, s, 0) === s.length ? 'yes' : 'no';
}

/** Does the value's JSON type fit one of `types` (an integer fits "number"; 1.0 is an integer)? */
export function typeMatches(types: readonly TypeName[], v: JsonValue): boolean {
  const t = jsonTypeOf(v);
  return types.includes(t) || (t === 'integer' && types.includes('number'));
}

/** A `$ref` string for a location: a JSON Pointer (RFC 6901) in a URI fragment, segments percent-encoded. */
function refTo(path: readonly (string | number)[]): string {
  return '#' + path.map((p) => '/' + encodeURIComponent(String(p).replace(/~/g, '~0').replace(/\//g, '~1'))).join('');
}

/** The memo key of a pointer: its segments with percent-escapes decoded (two spellings, one Sem). */
function canonicalPointer(ref: string): string {
  try {
    return ref.split('/').map((s) => decodeURIComponent(s)).join('\u0000');
  } catch {
    return ref;
  }
}

function suggestKeyword(word: string): string | null {
  let best: string | null = null;
  let bestD = 3;
  for (const k of KNOWN) {
    if (!SUPPORTED.has(k)) continue;
    const d = editDistance(word.toLowerCase(), k.toLowerCase());
    if (d < bestD && d <= Math.max(1, Math.floor(k.length / 4))) {
      bestD = d;
      best = k;
    }
  }
  return best;
}

function editDistance(a: string, b: string): number {
  const w = b.length + 1;
  const d = new Array<number>((a.length + 1) * w);
  for (let i = 0; i <= a.length; i++) d[i * w] = i;
  for (let j = 0; j <= b.length; j++) d[j] = j;
  for (let i = 1; i <= a.length; i++) {
    for (let j = 1; j <= b.length; j++) {
      let v = Math.min(d[(i - 1) * w + j]! + 1, d[i * w + j - 1]! + 1, d[(i - 1) * w + j - 1]! + (a[i - 1] === b[j - 1] ? 0 : 1));
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) v = Math.min(v, d[(i - 2) * w + j - 2]! + 1);
      d[i * w + j] = v;
    }
  }
  return d[a.length * w + b.length]!;
}
