/**
 * `treewright generate --model DIR --grammar G [--names F | --db F] [--unconstrained] [--beam K]
 * [--sample --temperature T --seed S] [--max-tokens N] [--json] "question"`: answers one question
 * with a seq2seq model folder, constrained by the grammar's token masks unless --unconstrained, and
 * reports whether the output parses and is well-typed. The model's input is `<prefix><question>`
 * (--prefix, else config.json's treewright.prefixes[grammar name], else "to <grammar name>: "; the
 * prefix is not repeated when the question already starts with it). `--json` prints one object:
 * question, input, text, tree,
 * parses, well_typed, parse_error, tokens, token_texts, logprobs, finished, score, strategy,
 * constrained, model_ms, mask_ms, total_ms. Exit code 0 when the output is well-typed, 2 when it is
 * not, 1 on an error (printed on stderr, naming the file).
 */
import { existsSync } from 'node:fs';
import type { Command } from 'commander';
import type { NameBindings } from '../../description/ir.ts';
import type { GenerateOptions } from '../../decode/index.ts';
import type { RegisterCommand } from './index.ts';

interface Flags {
  model: string;
  grammar: string;
  names?: string;
  db?: string;
  unconstrained?: boolean;
  beam?: string;
  sample?: boolean;
  temperature?: string;
  topP?: string;
  seed?: string;
  maxTokens?: string;
  prefix?: string;
  json?: boolean;
}

/** `--grammar sql` names a shipped grammar (grammars/sql/sql.twg); anything else is a path. */
function grammarPath(g: string): string {
  if (/^[a-z][a-z0-9_-]*$/.test(g) && !existsSync(g)) return `grammars/${g}/${g}.twg`;
  return g;
}

function number(flag: string, value: string | undefined, integer: boolean): number | undefined {
  if (value === undefined) return undefined;
  const n = Number(value);
  if (value.trim() === '' || !Number.isFinite(n) || (integer && !Number.isInteger(n))) {
    throw new Error(`--${flag}: found ${JSON.stringify(value)}; expected ${integer ? 'an integer' : 'a number'}`);
  }
  return n;
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('generate')
    .description('answer a question with a seq2seq model, constrained to programs of a grammar')
    .argument('<question>', 'the question (the model\'s target prefix is put before it, see --prefix)')
    .requiredOption('--model <dir>', 'model folder (config.json, tokenizer.json, onnx/...)')
    .requiredOption('--grammar <g>', 'grammar description (.twg path, or a shipped grammar: sql, lf, arith, json)')
    .option('--names <file>', 'JSON bindings of the open name sets: {"Set": ["a", ...]}')
    .option('--db <file>', 'SQLite database whose tables and columns bind Table and Column')
    .option('--unconstrained', 'decode without token masks (the output is still parsed and checked)')
    .option('--beam <k>', 'beam search with k hypotheses')
    .option('--sample', 'nucleus sampling instead of greedy decoding')
    .option('--temperature <t>', 'sampling temperature (default 1)')
    .option('--top-p <p>', 'sampling nucleus mass (default 1)')
    .option('--seed <s>', 'sampling seed (default 0)')
    .option('--max-tokens <n>', 'most tokens generated, end of sequence included (default 128)')
    .option('--prefix <text>', 'text put before the question (default: the model config\'s treewright.prefixes[grammar], else "to <grammar name>: "; not repeated when the question starts with it)')
    .option('--json', 'print one JSON object on stdout')
    .action(async (question: string, f: Flags) => {
      try {
        // loaded here so that other commands start without onnxruntime and the mask engine
        const { loadGrammar } = await import('../../description/index.ts');
        const { generate } = await import('../../decode/index.ts');
        const { loadModel } = await import('../../model/index.ts');
        const { checkNames, loadNames, namesFromDatabase } = await import('../../tree/index.ts');
        if (f.names !== undefined && f.db !== undefined) throw new Error('--names and --db: found both; expected at most one source of name bindings');
        if (f.beam !== undefined && f.sample) throw new Error('--beam and --sample: found both; expected one decoding strategy');
        const gPath = grammarPath(f.grammar);
        const grammar = loadGrammar(gPath);
        let names: NameBindings = {};
        let namesSource = '';
        if (f.names !== undefined) [names, namesSource] = [loadNames(f.names), f.names];
        else if (f.db !== undefined) [names, namesSource] = [namesFromDatabase(f.db), f.db];
        if (namesSource !== '') checkNames(grammar, names, namesSource);
        const beam = number('beam', f.beam, true);
        const opts: GenerateOptions = {
          grammar,
          names,
          unconstrained: f.unconstrained === true,
          strategy: beam !== undefined ? 'beam' : f.sample ? 'sample' : 'greedy',
          beamWidth: beam,
          temperature: number('temperature', f.temperature, false),
          topP: number('top-p', f.topP, false),
          seed: number('seed', f.seed, true),
          maxTokens: number('max-tokens', f.maxTokens, true),
        };
        const model = await loadModel(f.model);
        const prefix = f.prefix ?? model.prefixFor(grammar.name);
        const input = question.startsWith(prefix) ? question : prefix + question;
        const r = await generate(model, input, opts);
        if (f.json) {
          process.stdout.write(
            JSON.stringify({
              question,
              input,
              text: r.text,
              tree: r.tree,
              parses: r.parses,
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
            `parses: ${yes(r.parses)} · well-typed: ${yes(r.well_typed)} · ${r.tokens.length} tokens (${r.finished}) · ` +
              `model ${r.model_ms.toFixed(1)} ms · mask ${r.mask_ms.toFixed(1)} ms · total ${r.total_ms.toFixed(1)} ms\n`,
          );
          if (r.parse_error !== null) process.stderr.write(r.parse_error + '\n');
        }
        await model.dispose();
        setExit(r.well_typed ? 0 : 2);
      } catch (e) {
        process.stderr.write(`${(e as Error).message}\n`);
        setExit(1);
      }
    });
};
