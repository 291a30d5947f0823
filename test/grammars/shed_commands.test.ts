/**
 * The shed-command demo (grammars/shed_commands/): a JSON Schema of invented device commands for the
 * cooperative's cold-storage sheds and the description `treewright from-schema` generates from it.
 *
 * References: ajv 8's draft 2020-12 validator with ajv-formats (the schema's meaning) and the
 * ECMAScript built-in JSON.parse.
 */
import { readFileSync } from 'node:fs';
import { beforeAll, describe, expect, it } from 'vitest';
import type { Grammar } from '../../src/description/ir.ts';
import { loadGrammar } from '../../src/description/index.ts';
import { fromSchema } from '../../src/from-schema/index.ts';
import { createParser, printTree } from '../../src/tree/index.ts';
import { referenceValidator } from '../from-schema/support.ts';
import { readInvalidCases, readSamples } from './support.ts';

const SCHEMA = 'grammars/shed_commands/shed_commands.schema.json';
let grammar: Grammar;
let validate: (v: unknown) => boolean;

beforeAll(() => {
  grammar = loadGrammar('grammars/shed_commands/shed_commands.twg');
  validate = referenceValidator(true).compile(JSON.parse(readFileSync(SCHEMA, 'utf8')) as object);
});

describe('shed_commands', () => {
  it('the shipped description is what from-schema writes for the shipped schema', () => {
    const { text, notes } = fromSchema(readFileSync(SCHEMA, 'utf8'), { file: SCHEMA });
    expect(notes).toEqual([]);
    expect(readFileSync('grammars/shed_commands/shed_commands.twg', 'utf8')).toBe(text);
  });

  const valid = readSamples('grammars/shed_commands/samples/valid.json');
  it.each(valid)('valid.json:$line parses, prints back identically, and ajv accepts it', ({ text }) => {
    const tree = createParser(grammar).parse(text);
    expect(printTree(grammar, tree)).toBe(text);
    // reference: ajv (draft 2020-12, formats asserted) on JSON.parse of the text
    expect(validate(JSON.parse(text))).toBe(true);
  });

  const invalid = readInvalidCases('shed_commands');
  it.each(invalid)('$path gives the expected located error', ({ path, text, expected }) => {
    let message: string | null = null;
    try {
      createParser(grammar).parse(text.replace(/\n$/, ''), { file: path });
    } catch (e) {
      message = (e as Error).message;
    }
    expect(message).toBe(expected);
    // reference: ajv refuses each of them — except key-order.json, which the schema accepts and
    // the description refuses by its documented canonical key order
    expect(validate(JSON.parse(text))).toBe(path.endsWith('key-order.json'));
  });
});
