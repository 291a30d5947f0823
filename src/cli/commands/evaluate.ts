/**
 * `treewright evaluate --model DIR --grammar G --data FILE.jsonl --out DIR [--beam K] [--limit N]
 * [--split NAME] [--db FILE] [--names FILE] [--executor MODULE] [--max-tokens N] [--prefix TEXT]
 * [--workers N | --queue redis://HOST:PORT [--queue-name NAME]]`:
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
 *
 * Who decodes: `--workers N` child processes on this machine (default: one per core; rows come
 * out in the data's order, as with one), or, with `--queue redis://HOST:PORT`, any number of
 * `treewright worker` processes on any machines (src/queue/; rows in the order they arrive).
 * Metrics and report read the rows in the data's order, so they do not depend on who decoded.
 * Exit code 0 when the run finished, 1 on an error (printed on stderr, naming the file).
 */
import { existsSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Option, type Command } from 'commander';
import type { RowProducer } from '../../eval/evaluate.ts';
import type { EvalRow } from '../../eval/run.ts';
import type { Decoding } from '../../queue/fingerprint.ts';
import { runCommand, type RegisterCommand } from '../command.ts';
import type { ChildInit } from '../eval-child.ts';
import { integer, opt } from '../options.ts';
import { openEvalSetup, openExecution, type EvalSetup, type SetupFlags } from './eval-setup.ts';

/** The queue name when --queue-name is not given (evaluate and worker agree on it). */
export const DEFAULT_QUEUE_NAME = 'treewright';

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
  workers: number;
  queue?: string;
  queueName: string;
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
    .addOption(
      new Option('--workers <n>', `decoding processes on this machine, each with its own copy of the model (default: the number of cores, here ${availableParallelism()}); the rows and metrics do not depend on it`)
        .argParser(integer(1, 256))
        .default(availableParallelism()),
    )
    .addOption(new Option('--queue <url>', 'hand the items to `treewright worker` processes on any machines through Redis at redis://HOST:PORT[/DB]; rows are collected here').conflicts('workers'))
    .addOption(opt.queueName())
    .action((f: Flags) => runCommand(setExit, () => evaluateCommand(f), 'treewright evaluate'));
};

async function evaluateCommand(f: Flags): Promise<void> {
  const { evaluate, inProcess, loadItems } = await import('../../eval/evaluate.ts');
  const { beam, limit, maxTokens } = f;
  const gPath = f.grammar;
  const decoding: Decoding = { beam: beam ?? null, maxTokens: maxTokens ?? null, prefix: f.prefix ?? null };
  const setupFlags: SetupFlags = { model: f.model, grammar: f.grammar, db: f.db, names: f.names, executor: f.executor };

  const queueMod = f.queue === undefined ? null : await import('../../queue/index.ts');
  // the URL and the queue name are checked before anything is loaded
  const target = queueMod?.parseRedisUrl(f.queue!);
  if (queueMod !== null) queueMod.checkQueueName(f.queueName);
  // the grammar, names and executor are checked here first, whoever decodes
  const ex = await openExecution(setupFlags);
  const grammarName = ex.grammar.name;
  let items;
  try {
    items = f.data.flatMap((file) => {
      const got = loadItems(file, { goldField: grammarName, split: f.split, limit });
      if (got.length === 0) throw new Error(`${file}: no items${f.split !== undefined ? ` in split ${JSON.stringify(f.split)}` : ''}; expected at least one row`);
      return got;
    });
    const ids = new Set<string>();
    for (const it of items) {
      if (ids.has(it.id)) throw new Error(`--data: the id ${JSON.stringify(it.id)} occurs in more than one file; expected unique ids`);
      ids.add(it.id);
    }
  } catch (e) {
    ex.dispose();
    throw e;
  }

  let setup: EvalSetup | null = null;
  let producer: RowProducer | undefined;
  let how: string;
  try {
    if (queueMod !== null && target !== undefined && f.queue !== undefined) {
      const { fingerprint, queueProducer } = queueMod;
      const name = f.queueName;
      if (!existsSync(join(f.model, 'config.json'))) throw new Error(`${f.model}: no config.json; expected a model folder (config.json, tokenizer.json, tokenizer_config.json, onnx/…)`);
      const fp = fingerprint({ modelDir: f.model, grammarFile: gPath, names: ex.names, db: f.db, executor: f.executor, decoding });
      producer = queueProducer({ target, name, fp, decoding, onNote: (t) => process.stderr.write(`evaluate: ${t}\n`) });
      how = `queue ${target.display} (${name})`;
      const workerFlags = [
        `--queue ${f.queue.replace(/:[^:@/]*@/, ':***@')}`,
        name !== DEFAULT_QUEUE_NAME ? `--queue-name ${name}` : '',
        `--model ${f.model}`,
        `--grammar ${f.grammar}`,
        f.db !== undefined ? `--db ${f.db}` : '',
        f.names !== undefined ? `--names ${f.names}` : '',
        f.executor !== undefined ? `--executor ${f.executor}` : '',
      ].filter((x) => x !== '');
      process.stderr.write(`evaluate: rows are made by workers: treewright worker ${workerFlags.join(' ')} (same files on every machine)\n`);
    } else if (f.workers > 1) {
      const { processPool } = await import('../../eval/pool.ts');
      // onnxruntime's own thread choice in each child: capping it at cores ÷ N made the rows
      // phase 1.8× slower on the loaded 2-core machine (33.9 s against 18.8 s for 100 items)
      const init: ChildInit = { flags: setupFlags, decoding, warmQuestion: items[0].question };
      producer = processPool({
        size: f.workers,
        entry: fileURLToPath(new URL('../eval-child.mjs', import.meta.url)),
        init,
        onReady: (ready, total) => {
          if (ready === total) process.stderr.write(`evaluate: ${total} worker processes ready\n`);
        },
      });
      how = `${f.workers} worker processes`;
    } else {
      ex.dispose();
      setup = await openEvalSetup(setupFlags);
      await setup.warmUp(items[0].question, decoding);
      how = 'this process';
    }
  } catch (e) {
    ex.dispose();
    throw e;
  }

  process.stderr.write(`evaluate: rows made by ${how}\n`);
  try {
    const { readModelConfig, prefixFor } = await import('../../model/index.ts');
    const prefix = decoding.prefix ?? (setup !== null ? setup.defaultPrefix : prefixFor(readModelConfig(f.model), grammarName));
    const progress = await makeProgress();
    const result = await evaluate({
      items,
      producer: producer ?? inProcess(setup!.maker(decoding)),
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
  } finally {
    if (setup !== null) await setup.dispose();
    else ex.dispose();
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
