/**
 * from-schema — a JSON Schema (draft 2020-12) → a description (`.twg` text) whose programs are the
 * JSON texts the schema accepts, in one canonical key order.
 *
 * Where it sits: beside the description stage, in front of it. Its output is description *text*,
 * the input of `description/` (so a generated grammar is read, checked, parsed, printed and masked
 * exactly like a hand-written one); it imports `description/` only to compile what it wrote and
 * refuse to hand out a description that does not compile. Nothing earlier imports it; the CLI
 * (`treewright from-schema`) and the library entry point do.
 *
 * Example:
 *
 *   fromSchema('{"type":"object","properties":{"shed":{"enum":["north","south"]},
 *               "target_c":{"type":"number","minimum":-2,"maximum":12}},
 *               "required":["shed","target_c"],"additionalProperties":false}', { name: 'cmd' }).text
 *
 *   grammar cmd
 *   start Cmd
 *   space " \t\r\n"
 *   token Shed = /"north"|"south"/u as json-string
 *   token TargetC = /-(?:[01](?:\.\d{1,6})?|2(?:\.0{1,6})?)|12(?:\.0{1,6})?|(?:1[01]|\d)(?:\.\d{1,6})?/ as number
 *   sort Cmd {
 *     cmd(shed: Shed, target_c: TargetC) = "{" ~"\"shed\"" ~":" shed ~"," "\"target_c\"" ~":" target_c ~"}";
 *   }
 *
 * Pipeline inside the stage: json.ts (ordered parse with offsets) → read.ts (keywords → `Sem`,
 * errors for everything outside the subset) → emit.ts (policies, names, layouts; disjoint.ts proves
 * `oneOf` branches exclusive; lexemes.ts writes the token regexes) → compile check.
 *
 * Cost: linear in the schema plus the size of the regexes written (number ranges: O(digits²) per
 * bound; strings: O(1)); `oneOf` checks are O(branches²) proofs, each bounded in depth. The compile
 * check costs what `treewright check` costs.
 *
 * Limits (each a located error, never a silent change): keywords outside the subset; `pattern`
 * features the regex front-end refuses, anchors inside a pattern, a pattern too large for one token
 * class, `pattern` with `format`; `additionalProperties` other than false; a
 * `$ref` outside the document or with sibling keywords; `anyOf`/`oneOf` beside keywords other than
 * `type`; `oneOf` branches not provably disjoint; formats other than date, date-time, email, and a
 * format together with length bounds it does not imply; string lengths above 256; arrays needing
 * more than 256 written-out positions (the notation has no counted repetition); more than 1000 enum
 * values, 500 properties per object, 128 levels of nesting or 1 MiB of schema text.
 */
import { basename } from 'node:path';
import { compileDescription } from '../description/index.ts';
import * as E from './errors.ts';
import { formatSchemaDiagnostics, SchemaError, type SchemaDiagnostic } from './errors.ts';
import { Emitter } from './emit.ts';
import { jsonNodeOf, parseJsonText, type JsonNode } from './json.ts';
import { Reader } from './read.ts';

export { SchemaError, formatSchemaDiagnostic, formatSchemaDiagnostics, type SchemaDiagnostic } from './errors.ts';
export { STRING_UNIT, DATE_RAW, DATE_TIME_RAW, EMAIL_RAW, numberRegex } from './lexemes.ts';

export interface FromSchemaOptions {
  /** file name used in messages and in the description's header comment */
  readonly file?: string;
  /** the grammar's name (default: from the file name, else "schema") */
  readonly name?: string;
  /** treat every note (a documented policy that narrows what the schema accepts) as an error */
  readonly strict?: boolean;
}

export interface FromSchemaResult {
  /** the description (`.twg` text) */
  readonly text: string;
  /** the grammar's name */
  readonly name: string;
  /** notes: where a documented policy writes less than the schema accepts (closed objects, inferred types) */
  readonly notes: readonly SchemaDiagnostic[];
}

/**
 * A description whose programs are the JSON texts `schema` accepts (README "From a JSON Schema"
 * for the subset and the policies). `schema` is the schema's text (key order and positions kept) or
 * an already parsed value (key order as `Object.keys` gives it). Throws `SchemaError` (every
 * problem, formatted with `file:line:col` and the JSON path) when the schema is outside the subset
 * or accepts nothing.
 */
export function fromSchema(schema: string | unknown, options: FromSchemaOptions = {}): FromSchemaResult {
  const file = options.file ?? '<schema>';
  const text = typeof schema === 'string' ? schema : null;
  const fail = (ds: readonly SchemaDiagnostic[]): never => {
    throw new SchemaError(formatSchemaDiagnostics(ds, file, text), ds);
  };
  let root: JsonNode;
  if (text !== null) {
    const parsed = parseJsonText(text);
    if ('error' in parsed) return fail([E.malformedJson(parsed.span, parsed.error)]);
    root = parsed.node;
  } else {
    const node = jsonNodeOf(schema);
    if (node === null) return fail([E.notJsonValue()]);
    root = node;
  }
  const name = grammarName(options.name ?? (options.file ? basename(options.file).replace(/(\.schema)?\.json$/i, '') : 'schema'));
  const reader = new Reader(root);
  const sem = reader.readRoot();
  const errors = reader.diagnostics.filter((d) => d.severity === 'error');
  if (errors.length > 0) return fail(reader.diagnostics);
  const emitter = new Emitter(reader, name, options.file ? basename(options.file) : 'a schema');
  const out = emitter.run(sem);
  const all = [...reader.diagnostics, ...emitter.diagnostics];
  const notes = all.filter((d) => d.severity === 'note');
  if (out === null || all.some((d) => d.severity === 'error') || (options.strict && notes.length > 0)) {
    return fail(options.strict ? all.map((d) => ({ ...d, severity: 'error' as const })) : all);
  }
  // the description must compile cleanly; a problem here is ours, or a recursion without end
  const compiled = compileDescription(out.text, `${name}.twg`);
  const problems = compiled.diagnostics.filter((d) => d.severity === 'error' || d.severity === 'warning');
  if (problems.length > 0) {
    const unproductive = problems.find((d) => d.code === 'unproductive-sort' || d.code === 'left-recursion');
    if (unproductive) {
      const named = [...unproductive.message.matchAll(/`([^`]+)`/g)].map((m) => m[1]!);
      const sortName = (unproductive.code === 'left-recursion' ? named[named.length - 1] : named[0]) ?? '';
      const path = out.origins.get(sortName) ?? '#';
      return fail([E.unproductive(path, unproductive.code === 'left-recursion' ? 'the recursion reaches the same schema again before any text is written' : 'every value must contain another value of the same schema, so no finite document matches')]);
    }
    return fail([E.internalError(problems.map((d) => `${d.code}: ${d.message}`).join('; '))]);
  }
  return { text: out.text, name, notes };
}

/** A grammar name from any text: letters, digits and _ (the notation's `name`). */
function grammarName(s: string): string {
  let n = s.replace(/[^A-Za-z0-9_]+/g, '_').replace(/^_+|_+$/g, '');
  if (n === '') n = 'schema';
  if (/^[0-9]/.test(n)) n = `g_${n}`;
  return n;
}
