/**
 * `treewright generate --model DIR --grammar G [--names F | --db F] [--unconstrained] [--beam K]
 * [--sample --temperature T --seed S] [--max-tokens N] [--json] "question"`: answers one question
 * with a seq2seq model folder, constrained by the grammar's token masks unless --unconstrained, and
 * reports whether the output is valid (a program of the grammar) and well-typed. The model's input is `<prefix><question>`
 * (--prefix, else config.json's treewright.prefixes[grammar name], else "to <grammar name>: "; the
 * prefix is not repeated when the question already starts with it). `--json` prints one object:
 * question, input, text, tree,
 * valid, well_typed, parse_error, tokens, token_texts, logprobs, finished, score, strategy,
 * constrained, model_ms, mask_ms, total_ms. Exit code 0 when the output is well-typed, 2 when it is
 * not, 1 on an error (printed on stderr, naming the file).
 */
import { Option, type Command } from 'commander';
import type { GenerateOptions } from '../../decode/index.ts';
import { runCommand, type RegisterCommand } from '../command.ts';
import { decimal, opt, withInputs } from '../options.ts';

interface Flags {
  model: string;
  grammar: string;
  names?: string;
  db?: string;
  unconstrained?: boolean;
  beam?: number;
  sample?: boolean;
  temperature?: number;
  topP?: number;
  seed?: number;
  maxTokens?: number;
  prefix?: string;
  json?: boolean;
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('generate')
    .description('answer a question with a seq2seq model, constrained to programs of a grammar')
    .argument('<question>', 'the question (the model\'s target prefix is put before it, see --prefix)')
    .addOption(opt.model())
    .addOption(opt.grammar())
    .addOption(opt.names())
    .addOption(opt.db())
    .option('--unconstrained', 'decode without token masks (the output is still parsed and checked)')
    .addOption(opt.beam().conflicts('sample'))
    .option('--sample', 'nucleus sampling instead of greedy decoding')
    .addOption(new Option('--temperature <t>', 'sampling temperature (default 1)').argParser(decimal({ above: 0 })))
    .addOption(new Option('--top-p <p>', 'sampling nucleus mass (default 1)').argParser(decimal({ above: 0, atMost: 1 })))
    .addOption(opt.seed())
    .addOption(opt.maxTokens())
    .addOption(opt.inputPrefix())
    .addOption(opt.json('print one JSON object on stdout'))
    .action((question: string, f: Flags) =>
      runCommand(setExit, () =>
        withInputs(f, async ({ grammar, names }) => {
          // loaded here so that other commands start without onnxruntime and the mask engine
          const { generate } = await import('../../decode/index.ts');
          const { loadModel } = await import('../../model/index.ts');
          const opts: GenerateOptions = {
            grammar,
            names: names ?? {},
            unconstrained: f.unconstrained === true,
            strategy: f.beam !== undefined ? 'beam' : f.sample ? 'sample' : 'greedy',
            beamWidth: f.beam,
            temperature: f.temperature,
            topP: f.topP,
            seed: f.seed,
            maxTokens: f.maxTokens,
            // one question per process: a warm-up would compute masks this question never needs
            warm: false,
          };
          const model = await loadModel(f.model);
          try {
            const { text: input, ids } = model.input(question, grammar.name, f.prefix);
            const r = await generate(model, ids, opts);
            if (f.json) {
              process.stdout.write(
                JSON.stringify({
                  question,
                  input,
                  text: r.text,
                  tree: r.tree,
                  valid: r.valid,
                  well_typed: r.well_typed,
                  parse_error: r.parse_error,
                  tokens: r.tokens,
                  token_texts: r.tokenTexts,
                  logprobs: r.logprobs,
                  finished: r.finished,
                  score: r.score,
                  strategy: opts.strategy,
                  constrained: !opts.unconstrained,
                  model_ms: r.model_ms,
                  mask_ms: r.mask_ms,
                  total_ms: r.total_ms,
                }) + '\n',
              );
            } else {
              process.stdout.write(r.text + '\n');
              const yes = (b: boolean) => (b ? 'yes' : 'no');
              process.stderr.write(
                `valid: ${yes(r.valid)} · well_typed: ${yes(r.well_typed)} · ${r.tokens.length} tokens (${r.finished}) · ` +
                  `model ${r.model_ms.toFixed(1)} ms · mask ${r.mask_ms.toFixed(1)} ms · total ${r.total_ms.toFixed(1)} ms\n`,
              );
              if (r.parse_error !== null) process.stderr.write(r.parse_error + '\n');
            }
            return r.well_typed ? 0 : 2;
          } finally {
            await model.dispose();
          }
        }),
      ),
    );
};
