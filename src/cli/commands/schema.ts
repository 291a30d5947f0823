/**
 * `treewright schema --grammar G [--names FILE] [--db FILE]`: the JSON Schema (draft 2020-12) of the
 * grammar's trees on stdout; bound name sets become `enum`s.
 */
import type { Command } from 'commander';
import { toJsonSchema } from '../../tree/index.ts';
import { runCommand, type RegisterCommand } from '../command.ts';
import { opt, withInputs } from '../options.ts';

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('schema')
    .description('print the JSON Schema (draft 2020-12) of the grammar\'s JSON trees; bound name sets become enums')
    .addOption(opt.grammar())
    .addOption(opt.names())
    .addOption(opt.db())
    .action((opts: { grammar: string; names?: string; db?: string }) =>
      runCommand(setExit, () =>
        withInputs(opts, ({ grammar, names }) => {
          process.stdout.write(JSON.stringify(toJsonSchema(grammar, names), null, 2) + '\n');
        }),
      ),
    );
};
