/**
 * `treewright evaluate --model DIR --grammar G --data FILE.jsonl --out DIR [--beam K] [--limit N]
 * [--split NAME] [--db FILE] [--names FILE] [--executor MODULE] [--max-tokens N] [--prefix TEXT]`:
 * decodes every item of the data file(s) (--data may be repeated; --limit applies per file) twice (unconstrained, constrained), scores each output
 * (valid, well_typed, executable, exact_match, execution_accuracy, tokens, latency, mask-time
 * share) and writes to --out: results.jsonl (appended row by row; a killed run started again
 * continues where it stopped), metrics.json, taxonomy.json and report.html.
 *
 * Executors: the `sql` grammar runs on --db (SQLite, read-only); the `lf` grammar runs on the fact
 * base read from --db through the demo lexicon; any grammar may use --executor MODULE (a module
 * exporting execute(tree, context), see src/exec/types.ts). The model's input is
 * `<prefix><question>`; the prefix is --prefix, else `treewright.prefixes[<grammar name>]` in the
 * model's config.json, else `to <grammar name>: ` (the shipped model's convention).
 * Exit code 0 when the run finished, 1 on an error (printed on stderr, naming the file).
 */
import { Option, type Command } from 'commander';
import type { ExecuteFn } from '../../exec/types.ts';
import type { DecodeFn, EvalRow, Mode } from '../../eval/run.ts';
import { runCommand, type RegisterCommand } from '../command.ts';
import { bindNames, dbBindsNames, integer, loadGrammarFile, openDatabase, opt } from '../options.ts';

interface Flags {
  model: string;
  grammar: string;
  data: string[];
  out: string;
  beam?: number;
  limit?: number;
  split?: string;
  db?: string;
  names?: string;
  executor?: string;
  maxTokens?: number;
  prefix?: string;
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('evaluate')
    .description('measure a model on a data file, unconstrained and constrained: validity, accuracy, latency, and an HTML report')
    .addOption(opt.model())
    .addOption(opt.grammar())
    .requiredOption('--data <file>', 'JSONL rows {id, split, question, <grammar name>: gold program}; may be given more than once', (v: string, prev: string[]) => [...prev, v], [] as string[])
    .requiredOption('--out <dir>', 'output folder: results.jsonl, metrics.json, taxonomy.json, report.html')
    .addOption(opt.beam())
    .addOption(new Option('--limit <n>', 'evaluate only the first n items of each --data file (counted after --split)').argParser(integer(1)))
    .option('--split <name>', 'evaluate only the items of this split')
    .addOption(opt.db())
    .addOption(opt.names())
    .option('--executor <module>', 'your own executor: an ES module exporting execute(tree, context)')
    .addOption(opt.maxTokens())
    .addOption(opt.inputPrefix())
    .action((f: Flags) => runCommand(setExit, () => evaluateCommand(f), 'treewright evaluate'));
};

async function evaluateCommand(f: Flags): Promise<void> {
  // loaded here so that other commands start without onnxruntime and the mask engine
  const { generate, maskEngine } = await import('../../decode/index.ts');
  const { loadModel } = await import('../../model/index.ts');
  const { SqlRunner, sqlExecutor, lfExecutor, factsFromDatabase, loadExecutor } = await import('../../exec/index.ts');
  const { evaluate, loadItems } = await import('../../eval/evaluate.ts');
  const { createScorer } = await import('../../eval/target.ts');

  const { beam, limit, maxTokens } = f;
  const grammar = loadGrammarFile(f.grammar);
  const gPath = f.grammar;
  const db = f.db === undefined ? null : openDatabase(f.db);
  let closeRunner: (() => void) | null = null;
  try {
    let execute: ExecuteFn;
    if (f.executor !== undefined) execute = await loadExecutor(f.executor);
    else if (grammar.name === 'sql') {
      if (db === null) throw new Error(`--db: missing; expected the SQLite database (or .sql script) the ${gPath} programs run on`);
      const runner = new SqlRunner(db.path);
      closeRunner = () => runner.close();
      execute = sqlExecutor(runner, grammar);
    } else if (grammar.name === 'lf') {
      if (db === null) throw new Error(`--db: missing; expected the SQLite database (or .sql script) the ${gPath} fact base is read from`);
      execute = lfExecutor(factsFromDatabase(db.path));
    } else {
      throw new Error(`--executor: missing; expected an executor module for grammar ${grammar.name} (${gPath}); the shipped executors cover sql and lf`);
    }
    // with your own executor, --db may serve the executor alone: names come from it only when the
    // grammar declares sets it can bind
    const names = (await bindNames(grammar, f, db !== null && dbBindsNames(grammar) ? db : null)) ?? {};

    const items = f.data.flatMap((file) => {
      const got = loadItems(file, { goldField: grammar.name, split: f.split, limit });
      if (got.length === 0) throw new Error(`${file}: no items${f.split !== undefined ? ` in split ${JSON.stringify(f.split)}` : ''}; expected at least one row`);
      return got;
    });
    const ids = new Set<string>();
    for (const it of items) {
      if (ids.has(it.id)) throw new Error(`--data: the id ${JSON.stringify(it.id)} occurs in more than one file; expected unique ids`);
      ids.add(it.id);
    }
    const model = await loadModel(f.model);
    const prefix = f.prefix ?? model.prefixFor(grammar.name);
    const decode: DecodeFn = async (item, mode: Mode) => {
      const r = await generate(model, model.input(item.question, grammar.name, prefix).ids, {
        grammar,
        names,
        unconstrained: mode === 'unconstrained',
        strategy: beam !== undefined ? 'beam' : 'greedy',
        beamWidth: beam,
        maxTokens,
      });
      return { text: r.text, tokens: r.tokens.length, model_ms: r.model_ms, mask_ms: r.mask_ms, truncated: r.finished === 'length', token_texts: r.tokenTexts };
    };
    // warm-up outside the timed loop: compile the grammar's masks for this vocabulary (or load
    // them from the cache) and run both modes once, so the first item's latency is not the set-up
    maskEngine(model, grammar);
    for (const unconstrained of [true, false]) await generate(model, model.input(items[0].question, grammar.name, prefix).ids, { grammar, names, unconstrained, maxTokens: 4 });
    const scorer = createScorer({ grammar, names, execute, context: { grammar, db: db?.path } });

    const progress = await makeProgress();
    const result = await evaluate({
      items,
      decode,
      scorer,
      outDir: f.out,
      meta: {
        model: f.model,
        grammar: gPath,
        data: f.data.join(', ') + (f.split !== undefined ? ` (split ${f.split})` : '') + (limit !== undefined ? ` (first ${limit} per file)` : ''),
        decoding: beam !== undefined ? `beam ${beam}` : 'greedy',
        prefix: JSON.stringify(prefix),
      },
      onStart: progress.start,
      onRow: progress.row,
    });
    progress.stop();
    const warnGold = new Set(result.rows.filter((r) => r.gold_error !== null).map((r) => r.gold_error));
    for (const w of warnGold) process.stderr.write(`warning: ${w}\n`);
    process.stderr.write(
      `evaluate: ${result.written} rows written, ${result.resumed} kept from an earlier run` +
        (result.repairedBytes > 0 ? `, a torn last line of ${result.repairedBytes} bytes dropped` : '') +
        `; wrote ${f.out}/results.jsonl, metrics.json, taxonomy.json, report.html\n`,
    );
    for (const [split, m] of Object.entries(result.metrics)) {
      const p = (x: number | null) => (x === null ? '–' : `${(x * 100).toFixed(1)}%`);
      for (const mode of ['unconstrained', 'constrained'] as const) {
        const mm = m[mode];
        process.stderr.write(
          `  ${split} ${mode.padEnd(13)} valid ${p(mm.valid.rate)} · well_typed ${p(mm.well_typed.rate)} · executable ${p(mm.executable.rate)} · ` +
            `exact_match ${p(mm.exact_match.rate)} · execution_accuracy ${p(mm.execution_accuracy.rate)} · p50 ${mm.latency_ms_p50?.toFixed(1) ?? '–'} ms\n`,
        );
      }
    }
    await model.dispose();
  } finally {
    closeRunner?.();
    db?.dispose();
  }
}

interface Progress {
  start(done: number, total: number): void;
  row(row: EvalRow, done: number, total: number): void;
  stop(): void;
}

/** A cli-progress bar on a terminal; plain lines (every 10 rows and the last) otherwise. */
async function makeProgress(): Promise<Progress> {
  if (process.stderr.isTTY) {
    const { SingleBar, Presets } = await import('cli-progress');
    const bar = new SingleBar(
      { format: 'evaluate [{bar}] {value}/{total} rows · {eta_formatted} left · {last}', stream: process.stderr, hideCursor: true },
      Presets.shades_classic,
    );
    return {
      start: (done, total) => bar.start(total, done, { last: '' }),
      row: (r, done) => bar.update(done, { last: `${r.id} ${r.mode}: ${r.well_typed ? 'well-typed' : 'invalid'}` }),
      stop: () => bar.stop(),
    };
  }
  return {
    start: (done, total) => process.stderr.write(`evaluate: ${total} rows to produce, ${done} already in results.jsonl\n`),
    row: (r, done, total) => {
      if (done % 10 === 0 || done === total) process.stderr.write(`evaluate: ${done}/${total} rows (last: ${r.id} ${r.mode}, ${r.well_typed ? 'well-typed' : 'invalid'})\n`);
    },
    stop: () => undefined,
  };
}
