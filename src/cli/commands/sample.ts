/**
 * `treewright sample --grammar G [-n N] [--seed S] [--max-depth D] [--names FILE] [--db FILE]
 * [--weight CTOR=W ...] [--json]`: N random well-typed programs, one per line (`--json`: one JSON
 * tree per line). The same seed gives the same programs.
 */
import type { Command } from 'commander';
import { createSampler, printTree } from '../../tree/index.ts';
import { namesOption, resolveGrammar, runReporting, UsageError } from './parse.ts';
import type { RegisterCommand } from './index.ts';

function integer(flag: string, value: string, min: number): number {
  const n = Number(value);
  if (value.trim() === '' || !Number.isSafeInteger(n) || n < min) throw new UsageError(`--${flag}: found ${JSON.stringify(value)}; expected an integer ≥ ${min}`);
  return n;
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('sample')
    .description('print random well-typed programs of a grammar')
    .requiredOption('--grammar <g>', 'grammar description (.twg path, or a shipped grammar: sql, lf, arith, json)')
    .option('-n <n>', 'number of programs', '10')
    .option('--seed <s>', 'random seed (an integer)', '1')
    .option('--max-depth <d>', 'maximum tree depth (the root is depth 1)', '7')
    .option('--names <file>', 'JSON file binding open name sets: {"Set": ["a", "b"]}')
    .option('--db <file>', 'SQLite database whose table and column names bind Table and Column')
    .option('--weight <ctor=w...>', 'relative constructor weight (default 1; 0 disables it)')
    .option('--json', 'print JSON trees (one per line) instead of programs')
    .action((opts: { grammar: string; n: string; seed: string; maxDepth: string; names?: string; db?: string; weight?: string[]; json?: boolean }) => {
      runReporting(setExit, () => {
        const n = integer('n', opts.n, 0);
        const seed = integer('seed', opts.seed, Number.MIN_SAFE_INTEGER);
        const maxDepth = integer('max-depth', opts.maxDepth, 1);
        const grammar = resolveGrammar(opts.grammar);
        const names = namesOption(grammar, opts);
        const weights: Record<string, number> = {};
        for (const w of opts.weight ?? []) {
          const m = /^([A-Za-z_][A-Za-z0-9_]*)=(.+)$/.exec(w);
          if (m === null) throw new UsageError(`--weight: found ${JSON.stringify(w)}; expected CONSTRUCTOR=WEIGHT`);
          const x = Number(m[2]);
          if (!Number.isFinite(x) || x < 0) throw new UsageError(`--weight ${m[1]}: found ${JSON.stringify(m[2])}; expected a number ≥ 0`);
          weights[m[1]!] = x;
        }
        const sampler = createSampler(grammar, { seed, maxDepth, names, weights });
        const out: string[] = [];
        for (let i = 0; i < n; i++) {
          const tree = sampler.next();
          out.push(opts.json ? JSON.stringify(tree) : printTree(grammar, tree));
        }
        if (out.length > 0) process.stdout.write(out.join('\n') + '\n');
      });
    });
};
