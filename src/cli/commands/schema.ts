/**
 * `treewright schema --grammar G [--names FILE] [--db FILE]`: the JSON Schema (draft 2020-12) of the
 * grammar's trees on stdout; bound name sets become `enum`s.
 */
import type { Command } from 'commander';
import { toJsonSchema } from '../../tree/index.ts';
import { namesOption, resolveGrammar, runReporting } from './parse.ts';
import type { RegisterCommand } from './index.ts';

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('schema')
    .description('print the JSON Schema (draft 2020-12) of the grammar\'s JSON trees')
    .requiredOption('--grammar <g>', 'grammar description (.twg path, or a shipped grammar: sql, lf, arith, json)')
    .option('--names <file>', 'JSON file binding open name sets (they become enums)')
    .option('--db <file>', 'SQLite database whose table and column names bind Table and Column')
    .action((opts: { grammar: string; names?: string; db?: string }) => {
      runReporting(setExit, () => {
        const grammar = resolveGrammar(opts.grammar);
        const names = namesOption(grammar, opts);
        process.stdout.write(JSON.stringify(toJsonSchema(grammar, names), null, 2) + '\n');
      });
    });
};
