/**
 * JSON Schema (draft 2020-12) of a grammar's trees.
 *
 * `$defs` holds one entry per sort (`oneOf` its constructors: an object with `kind` as a `const`,
 * every field `required`, `additionalProperties: false`), one per token class (`token.NAME`) and
 * one per name set (`names.NAME`: an `enum` when the set is bound, else the token's spelling).
 *
 * Weaker than validateTree, by what JSON Schema can say: variable scoping is not expressed; for
 * `int`/`number` tokens only the JSON type, safe-integer bounds and a `minimum: 0` (when no lexeme
 * can start with `-`) are, not the regex; `pattern`s use the class regex, which ajv and other
 * validators evaluate with the `u` flag.
 */
import type { Field, Grammar, NameBindings } from '../description/ir.ts';
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
          properties[f.name] =
            f.card === 'one' ? el
            : f.card === 'optional' ? { anyOf: [el, { type: 'null' }] }
            : f.card === 'list' ? { type: 'array', items: el }
            : { type: 'array', items: el, minItems: 1 };
        }
        return {
          type: 'object',
          properties,
          required: ['kind', ...c.fields.map((f) => f.name)],
          additionalProperties: false,
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
