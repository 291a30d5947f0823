/**
 * `treewright parse --grammar G [FILE|-] [--names FILE] [--db FILE]`: code → JSON tree (one line on
 * stdout). Exit 1 with a located error (`file:line:col: expected ...` and an excerpt) on stderr.
 * With names bound, unknown names are located errors too; unbound variables always are.
 */
import type { Command } from 'commander';
import { createParser } from '../../tree/index.ts';
import { runCommand, type RegisterCommand } from '../command.ts';
import { opt, readInput, withInputs } from '../options.ts';

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('parse')
    .description('parse a program into its JSON tree')
    .argument('[file]', 'program file, or - for standard input', '-')
    .addOption(opt.grammar())
    .addOption(opt.names())
    .addOption(opt.db())
    .action((file: string, opts: { grammar: string; names?: string; db?: string }) =>
      runCommand(setExit, () =>
        withInputs(opts, ({ grammar, names }) => {
          const { text, name } = readInput(file);
          // a final line break ends the file, not the program
          const tree = createParser(grammar).parse(text.replace(/\r?\n$/, ''), { file: name, names });
          process.stdout.write(JSON.stringify(tree) + '\n');
        }),
      ),
    );
};
