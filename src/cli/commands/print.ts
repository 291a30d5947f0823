/**
 * `treewright print --grammar G [TREE.json|-]`: JSON tree → canonical code on stdout. The input is
 * one JSON tree, or JSON Lines (one tree per line, as `sample --json` writes), giving one program
 * per line. An invalid tree exits 1 with `FILE[:LINE]: $.json.path: what was expected`.
 */
import type { Command } from 'commander';
import type { Grammar, NameBindings } from '../../description/ir.ts';
import { PrintError, printTree, validateTree } from '../../tree/index.ts';
import { runCommand, UsageError, type RegisterCommand } from '../command.ts';
import { opt, readInput, withInputs } from '../options.ts';

function printOne(grammar: Grammar, value: unknown, where: string, names: NameBindings | undefined): string {
  const issue = validateTree(grammar, value, { names });
  if (issue !== null) throw new UsageError(`${where}: ${issue.path}: ${issue.message}`);
  try {
    return printTree(grammar, value);
  } catch (e) {
    if (e instanceof PrintError) throw new UsageError(`${where}: ${e.message}`);
    throw e;
  }
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('print')
    .description('print a JSON tree (or JSON Lines of trees) as canonical code')
    .argument('[tree]', 'JSON tree file, or - for standard input', '-')
    .addOption(opt.grammar())
    .addOption(opt.names())
    .addOption(opt.db())
    .action((file: string, opts: { grammar: string; names?: string; db?: string }) =>
      runCommand(setExit, () =>
        withInputs(opts, ({ grammar, names }) => {
          const { text, name } = readInput(file);
          let whole: unknown;
          let wholeError: Error | null = null;
          try {
            whole = JSON.parse(text);
          } catch (e) {
            wholeError = e as Error;
          }
          const out: string[] = [];
          if (wholeError === null) out.push(printOne(grammar, whole, name, names));
          else {
            const lines = text.split('\n');
            if (lines.filter((l) => l.trim() !== '').length < 2) throw new UsageError(`${name}: not JSON: ${wholeError.message}`);
            lines.forEach((line, i) => {
              if (line.trim() === '') return;
              let v: unknown;
              try {
                v = JSON.parse(line);
              } catch (e) {
                throw new UsageError(`${name}:${i + 1}: not JSON: ${(e as Error).message}`);
              }
              out.push(printOne(grammar, v, `${name}:${i + 1}`, names));
            });
          }
          process.stdout.write(out.join('\n') + '\n');
        }),
      ),
    );
};
