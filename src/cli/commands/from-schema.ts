/**
 * `treewright from-schema SCHEMA.json [--name N] [--strict]`: a description (`.twg`) on stdout whose
 * programs are the JSON texts the schema (draft 2020-12) accepts. Notes — where a documented policy
 * writes less than the schema accepts — go to stderr; `--strict` makes them errors. A schema
 * outside the supported subset prints every problem with file:line:col and its JSON path (exit 1).
 */
import type { Command } from 'commander';
import { fromSchema, formatSchemaDiagnostics } from '../../from-schema/index.ts';
import { runCommand, type RegisterCommand } from '../command.ts';
import { readInput } from '../options.ts';

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('from-schema')
    .description('write a description whose programs are the JSON texts a JSON Schema (draft 2020-12) accepts')
    .argument('<schema>', 'JSON Schema file (draft 2020-12), or - for standard input')
    .option('--name <name>', 'the grammar\'s name (default: from the file name)')
    .option('--strict', 'refuse the schema where a documented policy would write less than it accepts (no additionalProperties, no type)')
    .action((file: string, opts: { name?: string; strict?: boolean }) =>
      runCommand(setExit, () => {
        const input = readInput(file);
        const result = fromSchema(input.text, { file: input.name, name: opts.name ?? (file === '-' ? 'schema' : undefined), strict: opts.strict === true });
        if (result.notes.length > 0) process.stderr.write(formatSchemaDiagnostics(result.notes, input.name, input.text) + '\n');
        process.stdout.write(result.text);
      }),
    );
};
