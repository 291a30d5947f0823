/**
 * `treewright sample --grammar G [-n N] [--seed S] [--max-depth D] [--names FILE] [--db FILE]
 * [--weight CTOR=W ...] [--uniform] [--json]`: N random well-typed programs, one per line (`--json`:
 * one JSON tree per line). The same seed gives the same programs. By default the programs are
 * shaped like those people write (shallow, x/y/z variables, small or round numbers, plain words);
 * `--uniform` draws constructors by weight alone and values uniformly from their classes.
 */
import type { Command } from 'commander';
import { InvalidArgumentError, Option } from 'commander';
import { createSampler, printTree } from '../../tree/index.ts';
import { runCommand, type RegisterCommand } from '../command.ts';
import { integer, opt, withInputs } from '../options.ts';

/** `CTOR=W` → [CTOR, W], collected over repeated values. */
function weight(value: string, previous: Record<string, number> | undefined): Record<string, number> {
  const m = /^([A-Za-z_][A-Za-z0-9_]*)=(.+)$/.exec(value);
  if (m === null) throw new InvalidArgumentError('expected CONSTRUCTOR=WEIGHT');
  const x = Number(m[2]);
  if (m[2]!.trim() === '' || !Number.isFinite(x) || x < 0) throw new InvalidArgumentError(`expected a weight ≥ 0 after ${m[1]}=`);
  return { ...(previous ?? {}), [m[1]!]: x };
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('sample')
    .description('print random well-typed programs of a grammar')
    .addOption(opt.grammar())
    .addOption(new Option('-n <n>', 'number of programs').argParser(integer(0)).default(10))
    .addOption(opt.seed(1))
    .addOption(new Option('--max-depth <d>', 'maximum tree depth (the root is depth 1)').argParser(integer(1)).default(4))
    .addOption(opt.names())
    .addOption(opt.db())
    .addOption(new Option('--weight <ctor=w...>', 'relative constructor weight (default 1; 0 disables it)').argParser(weight))
    .addOption(new Option('--uniform', 'draw constructors by weight alone and token values uniformly from their classes (odd values, for testing), instead of programs shaped like those people write'))
    .addOption(opt.json('print JSON trees (one per line) instead of programs'))
    .action((opts: { grammar: string; n: number; seed: number; maxDepth: number; names?: string; db?: string; weight?: Record<string, number>; uniform?: boolean; json?: boolean }) =>
      runCommand(setExit, () =>
        withInputs(opts, ({ grammar, names }) => {
          const sampler = createSampler(grammar, { seed: opts.seed, maxDepth: opts.maxDepth, names, weights: opts.weight ?? {}, plausible: opts.uniform !== true });
          const out: string[] = [];
          for (let i = 0; i < opts.n; i++) {
            const tree = sampler.next();
            out.push(opts.json ? JSON.stringify(tree) : printTree(grammar, tree));
          }
          if (out.length > 0) process.stdout.write(out.join('\n') + '\n');
        }),
      ),
    );
};
