/**
 * JSON Schema (draft 2020-12) of a grammar's trees.
 *
 * `$defs` holds one entry per sort (`oneOf` its constructors: an object with `kind` as a `const`,
 * every field `required`, `additionalProperties: false`), one per token class (`token.NAME`) and
 * one per name set (`names.NAME`: an `enum` when the set is bound, else the token's spelling).
 *
 * Scopes and kinds (resolve.ts), as far as JSON Schema can say them: a qualified reference
 * (`known Column by table`, owners bound) must be owned by its qualifier — one `if`/`then` per
 * owner; an `enter` list of names has `uniqueItems`. What needs the rest of the tree (which names a
 * scope introduces, ambiguity, kinds across nodes) is stated in each field's `description` and
 * left to validateTree.
 *
 * Weaker than validateTree, by what JSON Schema can say: variable scoping is not expressed; for
 * `int`/`number` tokens only the JSON type, safe-integer bounds and a `minimum: 0` (when no lexeme
 * can start with `-`) are, not the regex; `pattern`s use the class regex, which ajv and other
 * validators evaluate with the `u` flag.
 */
import type { Constructor, Field, Grammar, NameBindings } from '../description/ir.ts';
import { bindNames } from '../description/bound.ts';
import { grammarInfo } from './info.ts';
import { firstChars, setHas } from './regex.ts';

type Schema = Record<string, unknown>;

const DRAFT = 'https://json-schema.org/draft/2020-12/schema';

export function toJsonSchema(grammar: Grammar, names?: NameBindings): Schema {
  const info = grammarInfo(grammar);
  const defs: Record<string, Schema> = {};
  const ref = (name: string) => ({ $ref: `#/$defs/${name}` });
  for (const t of grammar.tokens) {
    const ti = info.token.get(t.name)!;
    const anchored = `^(?:${t.pattern})$`;
    let s: Schema;
    switch (t.value) {
      case 'text': {
        s = { type: 'string', pattern: anchored };
        if (t.reserved && ti.keywordClash.length > 0) s.not = { enum: [...ti.keywordClash] };
        break;
      }
      case 'int':
      case 'number': {
        let signed = true;
        try {
          signed = setHas(firstChars(ti.rx()), 0x2d /* - */);
        } catch {
          signed = true;
        }
        s = t.value === 'int'
          ? { type: 'integer', minimum: signed ? Number.MIN_SAFE_INTEGER : 0, maximum: Number.MAX_SAFE_INTEGER }
          : signed ? { type: 'number' } : { type: 'number', minimum: 0 };
        break;
      }
      case 'json-string':
      case 'sql-string':
        s = { type: 'string' };
        break;
    }
    s.description = `token ${t.name} /${t.pattern}/${t.flags} as ${t.value}`;
    defs[`token.${t.name}`] = s;
  }
  for (const n of grammar.nameSets) {
    const members = names?.[n.name];
    defs[`names.${n.name}`] = members !== undefined
      ? { description: `name set ${n.name} (bound)`, enum: [...members] }
      : { description: `name set ${n.name}, spelled as ${n.token}`, ...ref(`token.${n.token}`) };
  }
  const element = (f: Field): Schema => {
    switch (f.type.kind) {
      case 'sort': return ref(f.type.name);
      case 'token': return ref(`token.${f.type.name}`);
      case 'names': return ref(`names.${f.type.name}`);
    }
  };
  for (const s of grammar.sorts) {
    defs[s.name] = {
      oneOf: s.constructors.map((cname) => {
        const c = info.ctor.get(cname)!;
        const properties: Record<string, Schema> = { kind: { const: c.name } };
        for (const f of c.fields) {
          const el = element(f);
          const p: Schema =
            f.card === 'one' ? el
            : f.card === 'optional' ? { anyOf: [el, { type: 'null' }] }
            : f.card === 'list' ? { type: 'array', items: el }
            : { type: 'array', items: el, minItems: 1 };
          if (f.scoping === 'enters' && f.type.kind === 'names' && (f.card === 'list' || f.card === 'nonempty')) p.uniqueItems = true;
          const said = scopeWords(grammar, f);
          properties[f.name] = said === null ? p : { ...p, description: said };
        }
        const owned = ownedByQualifier(grammar, c, names);
        return {
          type: 'object',
          properties,
          required: ['kind', ...c.fields.map((f) => f.name)],
          additionalProperties: false,
          ...(owned.length > 0 ? { allOf: owned } : {}),
        };
      }),
    };
  }
  return {
    $schema: DRAFT,
    title: `${grammar.name} trees`,
    description: `JSON trees of the ${grammar.name} grammar; start sort ${grammar.start}`,
    $ref: `#/$defs/${grammar.start}`,
    $defs: defs,
  };
}

/** What a field's scope and kind markers require, in words (null when it has none). */
function scopeWords(grammar: Grammar, f: Field): string | null {
  const out: string[] = [];
  const set = f.type.kind === 'names' ? grammar.nameSets.find((n) => n.name === f.type.name) : undefined;
  if (f.scoping === 'enters') out.push(`introduces its ${f.type.name} into the enclosing scope, once per scope`);
  if (f.scoping === 'known') {
    if (set?.owner) {
      const by = f.by === null ? '' : ` (the one named by ${f.by} when present)`;
      out.push(`must be a ${f.type.name} of exactly one ${set.owner} in the innermost scope that has one${by}`);
    } else out.push(`must be a ${f.type.name} introduced in an enclosing scope`);
  }
  if (f.kindOf !== null) {
    const ref = f.kindOf.kind === 'self' ? 'this node' : f.kindOf.slot === null ? f.kindOf.field : `${f.kindOf.field}.${f.kindOf.slot}`;
    out.push(`its kind must agree with that of ${ref}`);
  }
  return out.length === 0 ? null : `${out.join('; ')} (checked by validateTree, not by this schema)`;
}

/**
 * For `known X by q` with owners bound: one `if q = o then X ∈ members of o` per owner o that
 * owns something (and X ∈ ∅ for owners without members, so a wrong pair is refused).
 */
function ownedByQualifier(grammar: Grammar, c: Constructor, names: NameBindings | undefined): Schema[] {
  if (names === undefined || !c.fields.some((f) => f.by !== null)) return [];
  const bound = bindNames(grammar, names);
  const out: Schema[] = [];
  for (const f of c.fields) {
    if (f.by === null) continue;
    const set = bound.sets.find((s) => s.set.name === f.type.name)!;
    const owner = bound.sets.find((s) => s.set.name === set.set.owner)!;
    if (set.ownerIds === null || !owner.bound) continue;
    const byOwner: string[][] = owner.members.map(() => []);
    set.members.forEach((m, i) => {
      for (let k = set.ownerStart![i]!; k < set.ownerStart![i + 1]!; k++) byOwner[set.ownerIds![k]!]!.push(m);
    });
    owner.members.forEach((o, oi) => {
      const members = byOwner[oi]!;
      const allowed: Schema | boolean = members.length > 0 ? { enum: members } : false;
      const value = f.card === 'list' || f.card === 'nonempty' ? { type: 'array', items: allowed } : allowed;
      out.push({ if: { properties: { [f.by!]: { const: o } }, required: [f.by!] }, then: { properties: { [f.name]: value as Schema } } });
    });
  }
  return out;
}
