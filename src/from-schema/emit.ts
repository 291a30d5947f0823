/**
 * `Sem` → description text (`.twg`). The policies of the generated description (README, "From a
 * JSON Schema") are applied here, and only here:
 * - keys in the order the schema lists them under `properties`; an object without
 *   `additionalProperties` is written closed (a note says so);
 * - any JSON white space between tokens (`space " \t\r\n"`); canonical print `{"a": 1, "b": [1, 2]}`;
 * - keys and fixed strings (`const`, `enum`) spelled as JSON.stringify spells them (white space in
 *   them as `\uXXXX`, since a literal of the notation holds none); free strings in any escaping but
 *   lone surrogates; format strings without escapes;
 * - numbers without exponent, ≤ 15 digits, ≤ 6 after the point (lexemes.ts);
 * - where `type` is absent, only the types the other keywords imply (a note says so).
 *
 * Shape of the output: a property, item or branch whose values are one token class (a string,
 * number or integer, or an enum of strings or of numbers) is a field of that class; objects,
 * arrays, unions and enums of other values are sorts; a required property with one fixed value is
 * written as literal text with no field. Each `$defs` entry that is a sort or class keeps its name.
 */
import type { Span } from '../description/ir.ts';
import * as E from './errors.ts';
import type { SchemaDiagnostic } from './errors.ts';
import { ourTypes, provablyDisjoint } from './disjoint.ts';
import type { JsonValue } from './json.ts';
import {
  FORMAT_LENGTHS,
  MAX_DIGITS,
  MAX_FRACTION,
  alternativesRegex,
  decimalOf,
  formatRegex,
  lowerGrid,
  numberRegex,
  stringRegex,
  upperGrid,
} from './lexemes.ts';
import { compileTokenRegex, type Rx } from '../description/regex/index.ts';
import { lexemeBody, PatternTooLarge, withLength } from './pattern.ts';
import { LIMITS, type ArrSem, type ObjSem, type Reader, type Sem, type TypeName } from './read.ts';

type Typed = Extract<Sem, { k: 'typed' }>;

interface Hint {
  /** PascalCase base for a sort or class name */
  readonly type: string;
  /** snake_case base for a constructor name */
  readonly ctor: string;
}

/** What a schema location becomes where a field could stand. */
type Use = { readonly kind: 'type'; readonly name: string } | { readonly kind: 'never' } | { readonly kind: 'fixed'; readonly items: readonly string[] };

interface Ctor {
  readonly name: string;
  readonly fields: readonly string[];
  /** layout items, grouped into lines */
  readonly lines: readonly (readonly string[])[];
}

interface SortOut {
  readonly name: string;
  readonly comment: readonly string[];
  readonly ctors: Ctor[];
}

interface TokenOut {
  readonly name: string;
  readonly regex: string;
  readonly flags: string;
  readonly kind: string;
  readonly comment: string;
}

const NOTATION_WORDS = new Set(['grammar', 'start', 'space', 'token', 'names', 'sort', 'parens', 'as', 'of', 'reserved', 'except', 'blank', 'filler', 'sep', 'new', 'bound', 'infix', 'prefix', 'postfix', 'left', 'right', 'none', 'kind']);
const JSON_NUMBER = '-?(?:0|[1-9][0-9]*)(?:\\.[0-9]+)?(?:[eE][+-]?[0-9]+)?';

export interface EmitResult {
  readonly text: string;
  /** sort name → the schema path it was made from (for messages about the description) */
  readonly origins: ReadonlyMap<string, string>;
}

export class Emitter {
  readonly diagnostics: SchemaDiagnostic[] = [];
  private readonly typeNames = new Set<string>();
  private readonly ctorNames = new Set<string>();
  private readonly tokens: TokenOut[] = [];
  private readonly tokenByKey = new Map<string, string>();
  private readonly sorts: SortOut[] = [];
  private readonly origins = new Map<string, string>();
  private readonly named = new Map<Sem, Use>();
  private readonly building = new Set<Sem>();
  /** schemas whose alternatives are being copied into a union (a reference back to one is not copied again) */
  private readonly inlining = new Set<Sem>();
  private readonly refCounts = new Map<Sem, number>();
  private readonly noted = new Set<string>();
  private shared: { json?: string; member?: string; bool?: string; nul?: string } = {};

  constructor(
    private readonly reader: Reader,
    private readonly grammarName: string,
    private readonly source: string,
  ) {}

  /** The description text for the schema `root`, or null when it accepts nothing (an error is recorded). */
  run(root: Sem): EmitResult | null {
    this.countRefs(root, new Set());
    const rootHint: Hint = { type: pascal(this.grammarName) || 'Document', ctor: snake(this.grammarName) || 'document' };
    const use = this.named.get(root) ?? this.namedUse(root, rootHint);
    if (use.kind === 'never') {
      // a specific error (a cycle, a bound that cannot be written) already says why
      if (!this.diagnostics.some((d) => d.severity === 'error')) this.diagnostics.push(E.acceptsNothing('#', root.loc.span));
      return null;
    }
    let start: string;
    if (use.kind === 'type' && this.sorts.some((s) => s.name === use.name)) start = use.name;
    else {
      // a start must be a sort: wrap a token class or a fixed value
      start = this.uniqueType(rootHint.type === (use as { name?: string }).name ? `${rootHint.type}Document` : rootHint.type);
      const ctor = use.kind === 'type' ? { name: this.uniqueCtor(rootHint.ctor), fields: [`value: ${use.name}`], lines: [['value']] } : { name: this.uniqueCtor(rootHint.ctor), fields: [], lines: [[...use.items]] };
      this.sorts.unshift({ name: start, comment: [`# ${root.loc.path}: the whole document`], ctors: [ctor] });
    }
    return { text: this.render(start), origins: this.origins };
  }

  // ---- naming

  private uniqueType(base: string): string {
    let name = /^[A-Za-z_]/.test(base) ? base : `T${base}`;
    if (NOTATION_WORDS.has(name)) name += '_';
    let out = name;
    for (let i = 2; this.typeNames.has(out); i++) out = `${name}${i}`;
    this.typeNames.add(out);
    return out;
  }

  private uniqueCtor(base: string): string {
    let name = /^[A-Za-z_]/.test(base) ? base : `c_${base}`;
    if (name === '') name = 'value';
    let out = name;
    for (let i = 2; this.ctorNames.has(out); i++) out = `${name}_${i}`;
    this.ctorNames.add(out);
    return out;
  }

  private note(d: SchemaDiagnostic): void {
    const key = `${d.code} ${d.path}`;
    if (this.noted.has(key)) return;
    this.noted.add(key);
    this.diagnostics.push(d);
  }

  // ---- references

  private countRefs(sem: Sem, seen: Set<Sem>): void {
    if (seen.has(sem)) return;
    seen.add(sem);
    switch (sem.k) {
      case 'ref': {
        const t = this.reader.resolve(sem.target, null);
        if (t === null) return;
        this.refCounts.set(t, (this.refCounts.get(t) ?? 0) + 1);
        this.countRefs(t, seen);
        return;
      }
      case 'union':
        for (const b of sem.branches) this.countRefs(b, seen);
        return;
      case 'typed':
        for (const p of sem.obj.props) this.countRefs(p.sem, seen);
        for (const p of sem.arr.prefix) this.countRefs(p, seen);
        if (sem.arr.items) this.countRefs(sem.arr.items, seen);
        return;
      default:
        return;
    }
  }

  /** Follows a chain of references; null (and an error) for a cycle of references alone. */
  private deref(sem: Sem): Sem | null {
    const seen: string[] = [];
    let s = sem;
    while (s.k === 'ref') {
      if (seen.includes(s.target)) {
        this.note(E.refCycle(sem.loc.path + '/$ref', sem.loc.keys.get('$ref') ?? sem.loc.span, [...seen, s.target].join(' → ')));
        return null;
      }
      seen.push(s.target);
      const t = this.reader.resolve(s.target, null);
      if (t === null) return null;
      s = t;
    }
    return s;
  }

  /** Name hint of a `$ref` target from its pointer (`#/$defs/setTemperature` → SetTemperature). */
  private hintOfTarget(target: string): Hint {
    if (target === '#') return { type: pascal(this.grammarName) || 'Document', ctor: snake(this.grammarName) || 'document' };
    const last = decodeURIComponent(target.slice(target.lastIndexOf('/') + 1)).replace(/~1/g, '/').replace(/~0/g, '~');
    return { type: pascal(last) || 'Def', ctor: snake(last) || 'def' };
  }

  // ---- types of fields

  /** What `sem` becomes as the type of a field (or, when `fixedOk`, literal text for a single value). */
  private use(sem: Sem, hint: Hint, fixedOk: boolean): Use {
    if (sem.k === 'ref') {
      const t = this.deref(sem);
      if (t === null) return { kind: 'never' };
      const known = this.named.get(t);
      if (known) return known;
      return this.namedUse(t, this.hintOfTarget(this.lastTarget(sem)));
    }
    if (sem.k === 'enum' && fixedOk && sem.values.length === 1) return { kind: 'fixed', items: valueItems(sem.values[0]!, false) };
    if (sem.k === 'typed' && fixedOk && ourTypes(sem).length === 1 && ourTypes(sem)[0] === 'null') return { kind: 'fixed', items: ['"null"'] };
    return this.namedUse(sem, hint);
  }

  /** The last target of a chain of references. */
  private lastTarget(sem: Sem): string {
    let s = sem;
    let target = '#';
    for (let i = 0; s.k === 'ref' && i < 64; i++) {
      target = s.target;
      const t = this.reader.resolve(s.target, null);
      if (t === null) break;
      s = t;
    }
    return target;
  }

  /** A token class or sort for `sem` (memoised per schema location). */
  private namedUse(sem: Sem, hint: Hint): Use {
    const known = this.named.get(sem);
    if (known) return known;
    const use = this.build(sem, hint);
    this.named.set(sem, use);
    return use;
  }

  private build(sem: Sem, hint: Hint): Use {
    switch (sem.k) {
      case 'false':
        return { kind: 'never' };
      case 'true':
        return { kind: 'type', name: this.jsonSort() };
      case 'ref': {
        const t = this.deref(sem);
        return t === null ? { kind: 'never' } : this.use(t, this.hintOfTarget(this.lastTarget(sem)), false);
      }
      case 'enum': {
        if (sem.values.length === 0) return { kind: 'never' };
        const strings = sem.values.every((v) => typeof v === 'string');
        const numbers = sem.values.every((v) => typeof v === 'number');
        if (strings) return { kind: 'type', name: this.stringEnumToken(sem.values as string[], hint, sem.loc.path) };
        if (numbers) return { kind: 'type', name: this.numberEnumToken(sem.values as number[], hint, sem.loc.path) };
        return this.sortOf(sem, hint);
      }
      case 'union':
        return this.sortOf(sem, hint);
      case 'typed': {
        const types = effectiveTypes(sem);
        if (types === null) return { kind: 'type', name: this.jsonSort() };
        this.noteInferred(sem);
        if (types.length === 1) {
          const t = types[0]!;
          if (t === 'string' || t === 'integer' || t === 'number') {
            const tok = this.scalarToken(sem, t, hint);
            return tok === null ? { kind: 'never' } : { kind: 'type', name: tok };
          }
          if (t === 'boolean' && sem.types !== null) return { kind: 'type', name: this.boolSort() };
          if (t === 'null') return { kind: 'type', name: this.nullSort() };
        }
        return this.sortOf(sem, hint);
      }
    }
  }

  /** A sort whose constructors are the alternatives of `sem`. */
  private sortOf(sem: Sem, hint: Hint): Use {
    const name = this.uniqueType(hint.type);
    const use: Use = { kind: 'type', name };
    this.named.set(sem, use);
    this.building.add(sem);
    const out: SortOut = { name, comment: commentOf(sem), ctors: [] };
    this.sorts.push(out);
    this.origins.set(name, sem.loc.path);
    out.ctors.push(...distinct(this.alternatives(sem, hint, null)));
    this.building.delete(sem);
    if (out.ctors.length === 0) {
      this.sorts.splice(this.sorts.indexOf(out), 1);
      this.typeNames.delete(name);
      const never: Use = { kind: 'never' };
      this.named.set(sem, never);
      return never;
    }
    return use;
  }

  // ---- alternatives (constructors of a sort)

  private alternatives(sem: Sem, hint: Hint, allowed: readonly TypeName[] | null): Ctor[] {
    switch (sem.k) {
      case 'false':
        return [];
      case 'true':
        return allowed === null ? [this.wrapper(hint.ctor, this.jsonSort())] : this.anyValueOf(allowed, hint);
      case 'ref': {
        const t = this.deref(sem);
        if (t === null) return [];
        const th = this.hintOfTarget(this.lastTarget(sem));
        const inline = (this.refCounts.get(t) ?? 0) <= 1 && !this.building.has(t) && !this.named.has(t);
        if ((inline || (allowed !== null && !this.building.has(t))) && !this.inlining.has(t)) {
          this.inlining.add(t);
          try {
            return this.alternatives(t, th, allowed);
          } finally {
            this.inlining.delete(t);
          }
        }
        const use = this.use(t, th, false);
        return use.kind === 'type' ? [this.wrapper(th.ctor, use.name)] : [];
      }
      case 'enum': {
        const values = allowed === null ? sem.values : sem.values.filter((v) => typeFits(allowed, v));
        const strings = values.filter((v): v is string => typeof v === 'string');
        const numbers = values.filter((v): v is number => typeof v === 'number');
        const out: Ctor[] = [];
        const mixed = strings.length < values.length;
        if (strings.length > 0) out.push(this.wrapper(mixed ? `${hint.ctor}_string` : hint.ctor, this.stringEnumToken(strings, mixed ? { type: `${hint.type}String`, ctor: hint.ctor } : hint, sem.loc.path)));
        if (numbers.length > 0) out.push(this.wrapper(numbers.length < values.length ? `${hint.ctor}_number` : hint.ctor, this.numberEnumToken(numbers, numbers.length < values.length ? { type: `${hint.type}Number`, ctor: hint.ctor } : hint, sem.loc.path)));
        for (const v of values) {
          if (typeof v === 'string' || typeof v === 'number') continue;
          out.push({ name: this.uniqueCtor(`${hint.ctor}_${valueWord(v)}`), fields: [], lines: [valueItems(v, false)] });
        }
        return out;
      }
      case 'union': {
        if (sem.exclusive) this.checkExclusive(sem);
        const restrict = sem.types === null ? allowed : allowed === null ? sem.types : sem.types.filter((t) => allowed.includes(t) || (t === 'integer' && allowed.includes('number')));
        const out: Ctor[] = [];
        sem.branches.forEach((b, i) => {
          const bh = branchHint(b, hint, i);
          out.push(...this.alternatives(b, bh, restrict));
        });
        return out;
      }
      case 'typed': {
        const own = effectiveTypes(sem);
        if (own !== null) this.noteInferred(sem);
        if (own === null) return allowed === null ? [this.wrapper(hint.ctor, this.jsonSort())] : this.anyValueOf(allowed, hint);
        let types: TypeName[] = own;
        if (own !== null && allowed !== null) types = types.filter((t) => allowed.includes(t) || (t === 'integer' && allowed.includes('number')) || (t === 'number' && allowed.includes('integer')));
        if (allowed !== null && types.includes('number') && !allowed.includes('number')) types = types.map((t) => (t === 'number' ? 'integer' : t));
        const many = types.length > 1;
        const out: Ctor[] = [];
        for (const t of types) {
          const h: Hint = many ? { type: `${hint.type}${pascal(t)}`, ctor: `${hint.ctor}_${t}` } : hint;
          switch (t) {
            case 'null':
              out.push({ name: this.uniqueCtor(many || hint.ctor.endsWith('_null') ? h.ctor : `${hint.ctor}_null`), fields: [], lines: [['"null"']] });
              break;
            case 'boolean':
              out.push({ name: this.uniqueCtor(`${hint.ctor}_true`), fields: [], lines: [['"true"']] });
              out.push({ name: this.uniqueCtor(`${hint.ctor}_false`), fields: [], lines: [['"false"']] });
              break;
            case 'string':
            case 'integer':
            case 'number': {
              const tok = this.scalarToken(sem, t, h);
              if (tok !== null) out.push(this.wrapper(h.ctor, tok));
              break;
            }
            case 'object':
              out.push(...this.objectCtors(sem, sem.obj, h));
              break;
            case 'array':
              out.push(...this.arrayCtors(sem, sem.arr, h));
              break;
          }
        }
        return out;
      }
    }
  }

  /** Any value of the given types (a schema without keywords under a `type` beside anyOf/oneOf). */
  private anyValueOf(types: readonly TypeName[], hint: Hint): Ctor[] {
    const json = this.jsonSort();
    const member = this.shared.member!;
    const out: Ctor[] = [];
    const many = types.length > 1;
    for (const t of types) {
      const base = many ? `${hint.ctor}_${t}` : hint.ctor;
      switch (t) {
        case 'null':
          out.push({ name: this.uniqueCtor(base), fields: [], lines: [['"null"']] });
          break;
        case 'boolean':
          out.push({ name: this.uniqueCtor(`${hint.ctor}_true`), fields: [], lines: [['"true"']] });
          out.push({ name: this.uniqueCtor(`${hint.ctor}_false`), fields: [], lines: [['"false"']] });
          break;
        case 'object':
          out.push({ name: this.uniqueCtor(base), fields: [`members: ${member}*`], lines: [['"{"', '~members', 'sep', '~","', '~"}"']] });
          break;
        case 'array':
          out.push({ name: this.uniqueCtor(base), fields: [`items: ${json}*`], lines: [['"["', '~items', 'sep', '~","', '~"]"']] });
          break;
        case 'string':
          out.push(this.wrapper(base, this.token(stringRegex(0, Infinity), 'u', 'json-string', 'Text', 'any string (code points)')));
          break;
        case 'number':
          out.push(this.wrapper(base, this.token(JSON_NUMBER, '', 'text', 'JsonNumber', 'any JSON number (RFC 8259 §6), kept as its lexeme')));
          break;
        case 'integer':
          out.push(this.wrapper(base, this.scalarToken(ANY_INTEGER, 'integer', hint)!));
          break;
      }
    }
    return out;
  }

  private noteInferred(sem: Typed): void {
    if (sem.types === null && sem.inferred !== null) this.note(E.typeInferred(sem.loc.path, sem.loc.span, sem.inferred, sem.inferredFrom));
  }

  private wrapper(base: string, type: string): Ctor {
    return { name: this.uniqueCtor(base), fields: [`value: ${type}`], lines: [['value']] };
  }

  private checkExclusive(sem: Extract<Sem, { k: 'union' }>): void {
    const bs = sem.branches;
    for (let i = 0; i < bs.length; i++) {
      for (let j = 0; j < bs.length; j++) {
        if (i === j) continue;
        if (!provablyDisjoint(this.reader, bs[i]!, bs[j]!)) {
          this.note(E.oneOfOverlap(`${sem.loc.path}/oneOf`, sem.loc.keys.get('oneOf') ?? sem.loc.span, Math.min(i, j), Math.max(i, j)));
          return;
        }
      }
    }
  }

  // ---- objects

  private objectCtors(sem: Typed, obj: ObjSem, hint: Hint): Ctor[] {
    if (!obj.closed) this.note(E.closedByPolicy(sem.loc.path, sem.loc.span));
    for (const r of obj.required) {
      if (!obj.props.some((p) => p.key === r)) {
        this.note(E.requiredNotDeclared(`${sem.loc.path}/required`, sem.loc.keys.get('required') ?? sem.loc.span, r));
        return [];
      }
    }
    interface Part {
      required: boolean;
      field: string | null;
      type: string | null;
      key: string[];
      value: readonly string[];
    }
    const parts: Part[] = [];
    const fieldNames = new Set<string>();
    let ctorBase = hint.ctor;
    for (const p of obj.props) {
      const required = obj.required.includes(p.key);
      const ph: Hint = { type: pascal(p.key) || 'Value', ctor: snake(p.key) || 'value' };
      const use = this.use(p.sem, propertyHint(p.sem, ph), required);
      if (use.kind === 'never') {
        if (required) return [];
        continue;
      }
      const key = [keyLiteral(p.key)];
      if (/\\u/.test(key[0]!) && hasWhiteSpace(p.key)) this.note(E.keyEscaped(`${sem.loc.path}/properties/${p.key}`, p.keySpan, p.key, JSON.parse(key[0]!) as string));
      if (use.kind === 'fixed') {
        parts.push({ required, field: null, type: null, key, value: use.items });
        continue;
      }
      let field = fieldName(p.key);
      for (let i = 2; fieldNames.has(field); i++) field = `${fieldName(p.key)}_${i}`;
      fieldNames.add(field);
      parts.push({ required, field, type: use.name, key, value: [field] });
    }
    // a required property with one fixed string value names the constructor (a discriminator)
    const disc = obj.props.find((p) => obj.required.includes(p.key) && p.sem.k === 'enum' && p.sem.values.length === 1 && typeof p.sem.values[0] === 'string');
    if (disc) ctorBase = snake((disc.sem as { values: readonly JsonValue[] }).values[0] as string) || ctorBase;
    const member = (p: Part, glueFirst: boolean): string[] => [(glueFirst ? '~' : '') + p.key[0]!, '~":"', ...p.value];
    const fieldsOf = (ps: readonly Part[], requiredFrom: number) =>
      ps.filter((p) => p.field !== null).map((p) => `${p.field}: ${p.type}${p.required || ps.indexOf(p) === requiredFrom ? '' : '?'}`);
    const firstRequired = parts.findIndex((p) => p.required);
    if (firstRequired >= 0) {
      const lines: string[][] = [['"{"']];
      parts.forEach((p, i) => {
        if (i < firstRequired) lines.push([`${i === 0 ? '~' : ''}[`, ...member(p, false), '~","]']);
        else if (i === firstRequired) lines.push(member(p, i === 0));
        else if (p.required) lines.push(['~","', ...member(p, false)]);
        else lines.push(closeGroup(['[~","', ...member(p, false)]));
      });
      lines.push(['~"}"']);
      return [{ name: this.uniqueCtor(ctorBase), fields: fieldsOf(parts, -1), lines: joinGroups(lines) }];
    }
    // every property optional: one constructor for {}, and one per property that comes first
    const out: Ctor[] = [{ name: this.uniqueCtor(parts.length === 0 ? ctorBase : `${ctorBase}_empty`), fields: [], lines: [['"{"', '~"}"']] }];
    parts.forEach((first, i) => {
      const rest = parts.slice(i);
      const lines: string[][] = [['"{"'], member(first, true)];
      for (const p of rest.slice(1)) lines.push(closeGroup(['[~","', ...member(p, false)]));
      lines.push(['~"}"']);
      const name = this.uniqueCtor(`${ctorBase}_from_${first.field ?? snake(obj.props.find((q) => keyLiteral(q.key) === first.key[0])?.key ?? 'key')}`);
      out.push({ name, fields: fieldsOf(rest, 0), lines: joinGroups(lines) });
    });
    return out;
  }

  // ---- arrays

  private arrayCtors(sem: Typed, arr: ArrSem, hint: Hint): Ctor[] {
    const P = arr.prefix.length;
    let max = arr.max ?? Infinity;
    if (arr.items?.k === 'false') max = Math.min(max, P);
    const min = arr.min;
    if (min > max) return [];
    const elementAt = (j: number): Sem | null => (j < P ? arr.prefix[j]! : arr.items);
    const elemHint = (j: number): Hint => (j < P ? { type: `${hint.type}Item${j + 1}`, ctor: `${hint.ctor}_item${j + 1}` } : { type: `${hint.type}Item`, ctor: `${hint.ctor}_item` });
    const typeAt = (j: number): Use => {
      const s = elementAt(j);
      return s === null ? { kind: 'type', name: this.jsonSort() } : this.use(s, propertyHint(s, elemHint(j)), false);
    };
    // positions that can never hold a value end the array there
    const unrolled = Math.max(min, Math.min(max, P + 1));
    if (unrolled > LIMITS.positions) {
      this.note(E.tooLarge(`${sem.loc.path}/minItems`, sem.loc.keys.get('minItems') ?? sem.loc.span, `${unrolled} array positions to write out (the notation has no counted repetition)`, LIMITS.positions));
      return [];
    }
    const types: string[] = [];
    for (let j = 0; j < Math.min(max, P + 1); j++) {
      const u = typeAt(j);
      if (u.kind !== 'type') {
        if (j < min) return [];
        max = j;
        break;
      }
      types.push(u.name);
    }
    if (min > max) return [];
    const restType = (j: number) => types[Math.min(j, P)]!;
    const bounded = max !== Infinity;
    if (bounded && max - min > LIMITS.positions) {
      this.note(E.tooLarge(`${sem.loc.path}/maxItems`, sem.loc.keys.get('maxItems') ?? sem.loc.span, `${max - min} optional array positions (the notation has no counted repetition)`, LIMITS.positions));
      return [];
    }
    const fields: string[] = [];
    const lines: string[][] = [['"["']];
    for (let j = 0; j < min; j++) {
      fields.push(`item${j + 1}: ${restType(j)}`);
      lines.push(j === 0 ? [`~item${j + 1}`] : ['~","', `item${j + 1}`]);
    }
    if (max > min) {
      if (!bounded && min >= P) {
        // the rest: any number of items of one type
        fields.push(`${min === 0 ? 'items' : 'rest'}: ${restType(min)}*`);
        lines.push(min === 0 ? ['~items', 'sep', '~","'] : ['[~","', 'rest', 'sep', '~","]']);
      } else {
        fields.push(`more: ${this.chain(hint, min, max, P, restType)}?`);
        lines.push(min === 0 ? ['~[more]'] : ['[~","', 'more]']);
      }
    }
    lines.push(['~"]"']);
    return [{ name: this.uniqueCtor(hint.ctor), fields, lines: lines.length <= 4 ? [lines.flat()] : joinGroups(lines) }];
  }

  /** Sorts for the optional positions j..max−1 (one per position; an unbounded rest ends in a list). */
  private chain(hint: Hint, j: number, max: number, P: number, typeAt: (j: number) => string): string {
    const name = this.uniqueType(`${hint.type}From${j + 1}`);
    const out: SortOut = { name, comment: [`# positions ${j + 1} and on of ${hint.type}`], ctors: [] };
    this.sorts.push(out);
    const fields = [`item: ${typeAt(j)}`];
    const items = ['item'];
    if (j + 1 < max) {
      if (max === Infinity && j + 1 >= P) {
        fields.push(`rest: ${typeAt(j + 1)}*`);
        items.push('[~","', 'rest', 'sep', '~","]');
      } else {
        fields.push(`next: ${this.chain(hint, j + 1, max, P, typeAt)}?`);
        items.push('[~","', 'next]');
      }
    }
    out.ctors.push({ name: this.uniqueCtor(`${hint.ctor}_from_${j + 1}`), fields, lines: [items] });
    return name;
  }

  // ---- token classes

  private token(regex: string, flags: string, kind: string, hint: string, comment: string): string {
    const key = `${kind} /${regex}/${flags}`;
    const known = this.tokenByKey.get(key);
    if (known) return known;
    const name = this.uniqueType(hint);
    this.tokens.push({ name, regex, flags, kind, comment });
    this.tokenByKey.set(key, name);
    return name;
  }

  private scalarToken(sem: Typed, t: 'string' | 'integer' | 'number', hint: Hint): string | null {
    if (t === 'string') {
      const { min, format } = sem.str;
      const max = sem.str.max ?? Infinity;
      if (min > max) return null;
      if (sem.str.pattern !== null) {
        if (format !== null) {
          this.note(E.patternWithFormat(`${sem.loc.path}/pattern`, sem.loc.keys.get('pattern') ?? sem.loc.span));
          return null;
        }
        return this.patternToken(sem, min, max, hint);
      }
      if (format !== null) {
        const [f0, f1] = FORMAT_LENGTHS[format];
        if (max < f0 || min > f1) return null;
        if (min > f0 || max < f1) {
          this.note(E.formatWithLength(`${sem.loc.path}/format`, sem.loc.keys.get('format') ?? sem.loc.span, format));
          return null;
        }
        const words = { date: 'a date (RFC 3339 full-date)', 'date-time': 'a date and time (RFC 3339 date-time)', email: 'an email address (dot-atom local part @ host name)' }[format];
        return this.token(formatRegex(format), '', 'json-string', format === 'date' ? 'Date' : format === 'date-time' ? 'DateTime' : 'Email', `${sem.loc.path}: ${words}`);
      }
      const limit = Math.max(min, max === Infinity ? 0 : max);
      if (limit > LIMITS.maxLength) {
        const kw = max !== Infinity && max >= min ? 'maxLength' : 'minLength';
        this.note(E.tooLarge(`${sem.loc.path}/${kw}`, sem.loc.keys.get(kw) ?? sem.loc.span, `a string length of ${limit} to count exactly`, LIMITS.maxLength));
        return null;
      }
      const plain = min === 0 && max === Infinity;
      const words = plain ? 'any string' : max === Infinity ? `a string of at least ${min} characters` : min === max ? `a string of ${min} characters` : `a string of ${min} to ${max} characters`;
      return this.token(stringRegex(min, max), 'u', 'json-string', plain ? 'Text' : hint.type, `${sem.loc.path}: ${words} (code points)`);
    }
    const scale = t === 'integer' ? 0 : MAX_FRACTION;
    const { minimum, exclusiveMinimum, maximum, exclusiveMaximum } = sem.num;
    const limit = (10n ** BigInt(MAX_DIGITS) - 1n) * 10n ** BigInt(scale);
    let lo = -limit;
    let hi = limit;
    if (minimum !== null) lo = max(lo, lowerGrid(decimalOf(minimum), scale, false));
    if (exclusiveMinimum !== null) lo = max(lo, lowerGrid(decimalOf(exclusiveMinimum), scale, true));
    if (maximum !== null) hi = min(hi, upperGrid(decimalOf(maximum), scale, false));
    if (exclusiveMaximum !== null) hi = min(hi, upperGrid(decimalOf(exclusiveMaximum), scale, true));
    const re = numberRegex(lo, hi, scale as 0 | 6);
    if (re === null) return null;
    const bounded = minimum !== null || maximum !== null || exclusiveMinimum !== null || exclusiveMaximum !== null;
    const range = [
      minimum !== null ? `≥ ${minimum}` : exclusiveMinimum !== null ? `> ${exclusiveMinimum}` : null,
      maximum !== null ? `≤ ${maximum}` : exclusiveMaximum !== null ? `< ${exclusiveMaximum}` : null,
    ].filter((x) => x !== null);
    const words = t === 'integer' ? `an integer${range.length ? ' ' + range.join(' and ') : ''} (at most ${MAX_DIGITS} digits)` : `a number${range.length ? ' ' + range.join(' and ') : ''} (no exponent, at most ${MAX_DIGITS} digits, ${MAX_FRACTION} after the point)`;
    return this.token(re, '', t === 'integer' ? 'int' : 'number', bounded ? hint.type : t === 'integer' ? 'Integer' : 'Number', `${sem.loc.path}: ${words}`);
  }

  /** A string with a pattern (and length bounds): pattern.ts, spelled as JSON.stringify spells it. */
  private patternToken(sem: Typed, min: number, max: number, hint: Hint): string | null {
    const p = sem.str.pattern!;
    const path = `${sem.loc.path}/pattern`;
    const span = sem.loc.keys.get('pattern') ?? sem.loc.span;
    let rx: Rx | null;
    try {
      rx = withLength(p.rx, min, max);
    } catch (err) {
      if (!(err instanceof PatternTooLarge)) throw err;
      this.note(E.patternTooLarge(path, span, `cutting it to ${min}..${max === Infinity ? '' : max} characters writes ${err.message}`));
      return null;
    }
    if (rx === null) return null;
    const regex = `"${lexemeBody(rx)}"`;
    // the automaton is built here once, so that a pattern too large for it is this error, located
    const compiled = compileTokenRegex(regex, 'u');
    if ('code' in compiled) {
      if (compiled.code === 'regex-too-large') {
        this.note(E.patternTooLarge(path, span, compiled.message));
        return null;
      }
      this.note(E.internalError(`the token regex written for ${path}: ${compiled.message}`));
      return null;
    }
    const length = min === 0 && max === Infinity ? '' : max === Infinity ? `, at least ${min} characters` : min === max ? `, ${min} characters` : `, ${min} to ${max} characters`;
    return this.token(regex, 'u', 'json-string', hint.type, `${sem.loc.path}: a string in which /${p.source}/u finds a match${length} (code points; spelled as JSON.stringify spells it)`);
  }

  private stringEnumToken(values: readonly string[], hint: Hint, path: string): string {
    // a token regex may hold white space, so the values are spelled exactly as the printer writes them
    const lexemes = values.map((v) => JSON.stringify(v));
    const shown = values.length <= 6 ? values.map((v) => JSON.stringify(v)).join(', ') : `${values.length} strings`;
    return this.token(alternativesRegex(lexemes), 'u', 'json-string', hint.type, `${path}: one of ${shown}`);
  }

  private numberEnumToken(values: readonly number[], hint: Hint, path: string): string {
    const lexemes = values.map((v) => JSON.stringify(v + 0));
    const kind = values.every((v) => Number.isSafeInteger(v))
      ? 'int'
      : lexemes.every((l) => /^-?\d+(?:\.\d+)?$/.test(l) && l.replace(/\D/g, '').length <= MAX_DIGITS && (l.split('.')[1] ?? '').length <= MAX_FRACTION)
        ? 'number'
        : 'text';
    return this.token(alternativesRegex(lexemes), '', kind, hint.type, `${path}: one of ${lexemes.join(', ')}`);
  }

  // ---- shared sorts

  private jsonSort(): string {
    if (this.shared.json) return this.shared.json;
    const json = this.uniqueType('Json');
    this.shared.json = json;
    const member = this.uniqueType('JsonMember');
    this.shared.member = member;
    const text = this.token(stringRegex(0, Infinity), 'u', 'json-string', 'Text', 'any string (code points)');
    const number = this.token(JSON_NUMBER, '', 'text', 'JsonNumber', 'any JSON number (RFC 8259 §6), kept as its lexeme');
    const c = (base: string) => this.uniqueCtor(base);
    this.sorts.push({
      name: json,
      comment: ['# any JSON value (RFC 8259)'],
      ctors: [
        { name: c('json_object'), fields: [`members: ${member}*`], lines: [['"{"', '~members', 'sep', '~","', '~"}"']] },
        { name: c('json_array'), fields: [`items: ${json}*`], lines: [['"["', '~items', 'sep', '~","', '~"]"']] },
        { name: c('json_string'), fields: [`value: ${text}`], lines: [['value']] },
        { name: c('json_number'), fields: [`value: ${number}`], lines: [['value']] },
        { name: c('json_true'), fields: [], lines: [['"true"']] },
        { name: c('json_false'), fields: [], lines: [['"false"']] },
        { name: c('json_null'), fields: [], lines: [['"null"']] },
      ],
    });
    this.sorts.push({ name: member, comment: [], ctors: [{ name: c('json_member'), fields: [`key: ${text}`, `value: ${json}`], lines: [['key', '~":"', 'value']] }] });
    return json;
  }

  private boolSort(): string {
    if (this.shared.bool) return this.shared.bool;
    const name = this.uniqueType('Boolean');
    this.shared.bool = name;
    this.sorts.push({ name, comment: [], ctors: [{ name: this.uniqueCtor('true'), fields: [], lines: [['"true"']] }, { name: this.uniqueCtor('false'), fields: [], lines: [['"false"']] }] });
    return name;
  }

  private nullSort(): string {
    if (this.shared.nul) return this.shared.nul;
    const name = this.uniqueType('Null');
    this.shared.nul = name;
    this.sorts.push({ name, comment: [], ctors: [{ name: this.uniqueCtor('null'), fields: [], lines: [['"null"']] }] });
    return name;
  }

  // ---- text

  private render(start: string): string {
    // only what the start sort reaches (an object dropped because a required property can hold
    // nothing may have left sorts and classes for its other properties)
    const byName = new Map(this.sorts.map((x) => [x.name, x]));
    const reached = new Set<string>([start]);
    const queue = [start];
    while (queue.length > 0) {
      const sort = byName.get(queue.pop()!);
      for (const c of sort?.ctors ?? []) {
        for (const f of c.fields) {
          const type = f.slice(f.indexOf(':') + 1).trim().replace(/[?*+]$/, '');
          if (!reached.has(type)) {
            reached.add(type);
            queue.push(type);
          }
        }
      }
    }
    const tokens = this.tokens.filter((t) => reached.has(t.name));
    const sortsReached = this.sorts.filter((x) => reached.has(x.name));
    const out: string[] = [];
    out.push(`# Generated by \`treewright from-schema\` from ${this.source} (JSON Schema draft 2020-12).`);
    out.push('# Its programs are the JSON texts the schema accepts, written with the keys of each object in');
    out.push('# the order the schema lists them; see README.md, "From a JSON Schema", for the policies.');
    out.push(`grammar ${this.grammarName}`);
    out.push(`start ${start}`);
    out.push('space " \\t\\r\\n"');
    if (tokens.length > 0) out.push('');
    for (const t of tokens) {
      out.push(`# ${oneLine(t.comment)}`);
      out.push(`token ${t.name} = /${t.regex}/${t.flags} as ${t.kind}`);
    }
    const sorts = [...sortsReached].sort((a, b) => (a.name === start ? -1 : b.name === start ? 1 : 0));
    for (const s of sorts) {
      out.push('');
      for (const c of s.comment) out.push(c);
      out.push(`sort ${s.name} {`);
      for (const c of s.ctors) {
        const head = `  ${c.name}(${c.fields.join(', ')}) =`;
        const one = c.lines.map((l) => l.join(' ')).join(' ');
        if (c.lines.length === 1 || head.length + one.length + 2 <= 100) out.push(`${head} ${one};`);
        else {
          out.push(head);
          c.lines.forEach((l, i) => out.push(`    ${l.join(' ')}${i === c.lines.length - 1 ? ';' : ''}`));
        }
      }
      out.push('}');
    }
    return out.join('\n') + '\n';
  }
}

// ---- helpers

const ANY_INTEGER: Typed = {
  k: 'typed',
  loc: { path: '#', span: null, title: null, description: null, keys: new Map() },
  types: ['integer'],
  inferred: null,
  inferredFrom: [],
  obj: { props: [], required: [], closed: true },
  arr: { prefix: [], items: null, min: 0, max: null },
  str: { min: 0, max: null, format: null, pattern: null },
  num: { minimum: null, exclusiveMinimum: null, maximum: null, exclusiveMaximum: null },
};

/** The types the description writes for a typed node; null for "any JSON value". */
function effectiveTypes(sem: Typed): TypeName[] | null {
  if (sem.types === null && sem.inferred === null) return null;
  const ts = [...ourTypes(sem)];
  return ts.includes('number') ? ts.filter((t) => t !== 'integer') : ts;
}

function typeFits(allowed: readonly TypeName[], v: JsonValue): boolean {
  if (v === null) return allowed.includes('null');
  if (Array.isArray(v)) return allowed.includes('array');
  if (typeof v === 'number') return allowed.includes('number') || (allowed.includes('integer') && Number.isInteger(v));
  return allowed.includes(typeof v as TypeName);
}

/** A `$ref` property keeps the def's name; anything else is named after the property. */
function propertyHint(sem: Sem, h: Hint): Hint {
  return h;
  void sem;
}

function branchHint(sem: Sem, parent: Hint, i: number): Hint {
  if (sem.k === 'typed' && sem.loc.title) return { type: pascal(sem.loc.title) || parent.type, ctor: snake(sem.loc.title) || parent.ctor };
  const types = sem.k === 'typed' ? effectiveTypes(sem) : null;
  if (types !== null && types.length === 1) return { type: `${parent.type}${pascal(types[0]!)}`, ctor: `${parent.ctor}_${types[0]}` };
  return { type: `${parent.type}${i + 1}`, ctor: `${parent.ctor}_${i + 1}` };
}

/** Comment lines for a sort: its schema path, title and description. */
function commentOf(sem: Sem): string[] {
  if (sem.loc.path === '#' && !sem.loc.title && !sem.loc.description) return [];
  const head = `# ${sem.loc.path}${sem.loc.title ? `: ${oneLine(sem.loc.title)}` : ''}`;
  const lines = [head];
  if (sem.loc.description) for (const l of sem.loc.description.split(/\r?\n/)) if (l.trim() !== '') lines.push(`# ${l.trim()}`);
  return lines;
}

function oneLine(s: string): string {
  return s.replace(/\s+/g, ' ').trim();
}

function hasWhiteSpace(s: string): boolean {
  return /\s/u.test(s);
}

/** JSON.stringify's spelling, with white space that it leaves raw written as \uXXXX. */
export function jsonLexeme(s: string): string {
  return JSON.stringify(s).replace(/\s/gu, (ch) => (ch === ' ' || !/\s/u.test(ch) ? '\\u0020' : '\\u' + ch.codePointAt(0)!.toString(16).padStart(4, '0')));
}

/** A key as a literal of the description: the JSON lexeme written as a notation string. */
function keyLiteral(key: string): string {
  return JSON.stringify(jsonLexeme(key));
}

/** Literal items that write a fixed JSON value canonically. */
function valueItems(v: JsonValue, glueFirst: boolean): string[] {
  const g = glueFirst ? '~' : '';
  if (v === null || typeof v === 'boolean') return [`${g}"${String(v)}"`];
  if (typeof v === 'number') return [`${g}${JSON.stringify(JSON.stringify(v + 0))}`];
  if (typeof v === 'string') return [`${g}${JSON.stringify(jsonLexeme(v))}`];
  if (Array.isArray(v)) {
    const out = [`${g}"["`];
    v.forEach((x, i) => {
      if (i > 0) out.push('~","');
      out.push(...valueItems(x, i === 0));
    });
    out.push('~"]"');
    return out;
  }
  const out = [`${g}"{"`];
  Object.keys(v).forEach((k, i) => {
    if (i > 0) out.push('~","');
    out.push(`${i === 0 ? '~' : ''}${keyLiteral(k)}`, '~":"', ...valueItems(v[k]!, false));
  });
  out.push('~"}"');
  return out;
}

/**
 * The constructors with different layouts: overlapping `anyOf` branches can give two that print
 * the same text (compared as the description compiler compares them: slots by type and
 * cardinality, glue ignored); the first is kept, the language is the same.
 */
function distinct(ctors: readonly Ctor[]): Ctor[] {
  const seen = new Set<string>();
  const out: Ctor[] = [];
  for (const c of ctors) {
    const types = new Map(c.fields.map((f) => [f.slice(0, f.indexOf(':')), f.slice(f.indexOf(':') + 1).trim()]));
    const key = c.lines
      .flat()
      .map((item) => {
        // an item is literal text ("…"), a slot name, `sep`, or one of them inside `[`/`]` with glue `~`
        const m = /^(~?\[?~?)(.*?)(\]?)$/.exec(item)!;
        const core = m[2]!;
        const open = m[1]!.includes('[') ? '[' : '';
        return open + (types.has(core) ? `<${types.get(core)}>` : core) + m[3]!;
      })
      .join(' ');
    if (seen.has(key)) continue;
    seen.add(key);
    out.push(c);
  }
  return out;
}

/** Ends an optional group on its last item: `[~"," "\"b\"" ~":" b]`. */
function closeGroup(items: string[]): string[] {
  return [...items.slice(0, -1), `${items[items.length - 1]!}]`];
}

function valueWord(v: JsonValue): string {
  if (v === null) return 'null';
  if (typeof v === 'boolean') return String(v);
  if (Array.isArray(v)) return 'array';
  return 'object';
}

/** Groups `[` … `]` items of one line stay as they are; lines are joined only for rendering. */
function joinGroups(lines: string[][]): string[][] {
  return lines.map((l) => {
    // "[" and "~[" stand alone in the item list: attach them to the next item
    const out: string[] = [];
    for (let i = 0; i < l.length; i++) {
      if ((l[i] === '[' || l[i] === '~[') && i + 1 < l.length) {
        out.push(l[i] + l[i + 1]);
        i++;
      } else out.push(l[i]!);
    }
    return out;
  });
}

/** A field name from a key: letters, digits and _ only; never a word of the notation or `kind`. */
function fieldName(key: string): string {
  let s = key.replace(/[^A-Za-z0-9_]+/g, '_').replace(/^_+|_+$/g, '');
  if (s === '') s = 'value';
  if (/^[0-9]/.test(s)) s = `f_${s}`;
  if (NOTATION_WORDS.has(s)) s += '_';
  return s;
}

/** `set temperature-c` → `SetTemperatureC`. */
export function pascal(s: string): string {
  return words(s).map((w) => w[0]!.toUpperCase() + w.slice(1)).join('');
}

/** `setTemperature` → `set_temperature`. */
export function snake(s: string): string {
  return words(s).map((w) => w.toLowerCase()).join('_');
}

function words(s: string): string[] {
  return s
    .replace(/([a-z0-9])([A-Z])/g, '$1 $2')
    .split(/[^A-Za-z0-9]+/)
    .filter((w) => w !== '');
}

function max(a: bigint, b: bigint): bigint {
  return a > b ? a : b;
}

function min(a: bigint, b: bigint): bigint {
  return a < b ? a : b;
}

export type { Span };
