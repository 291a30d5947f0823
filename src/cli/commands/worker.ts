/**
 * `treewright worker --queue redis://HOST:PORT --model DIR --grammar G [--db FILE] [--names FILE]
 * [--executor MODULE] [--queue-name NAME] [--lease SECONDS] [--exit-when-idle SECONDS]`: pulls the
 * jobs `treewright evaluate --queue …` enqueued, one at a time — decodes the item in the job's mode
 * with the job's decoding options, executes and scores the output — and posts the row back. Run
 * any number of them, on any machines, each with the same model, grammar, names and database as
 * the evaluation (a job made for other files is refused, naming what differs).
 *
 * Stops on SIGINT or SIGTERM after posting the job in hand (a second signal stops at once; the
 * job then goes to another worker when its lease runs out), after --exit-when-idle seconds without
 * a job, or with exit code 1 on an error (Redis unreachable or lost, a queue of another format,
 * a job for other files).
 */
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { Option, type Command } from 'commander';
import { runCommand, type RegisterCommand } from '../command.ts';
import { decimal, opt } from '../options.ts';
import { openEvalSetup, openExecution } from './eval-setup.ts';

interface Flags {
  queue: string;
  queueName: string;
  model: string;
  grammar: string;
  db?: string;
  names?: string;
  executor?: string;
  lease: number;
  exitWhenIdle?: number;
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('worker')
    .description('make evaluation rows for `treewright evaluate --queue`: pull jobs from Redis, decode, execute, post the rows')
    .requiredOption('--queue <url>', 'the Redis the evaluation queued its items on: redis://HOST:PORT[/DB]')
    .addOption(opt.queueName())
    .addOption(opt.model())
    .addOption(opt.grammar())
    .addOption(opt.db())
    .addOption(opt.names())
    .option('--executor <module>', 'your own executor: an ES module exporting execute(tree, context)')
    .addOption(
      new Option('--lease <seconds>', 'how long a job stays with a worker that stopped answering before another worker takes it (renewed every half lease while the job runs)')
        .argParser(decimal({ above: 0.999, atMost: 3600 }))
        .default(30),
    )
    .addOption(new Option('--exit-when-idle <seconds>', 'stop after this many seconds without a job (default: wait for jobs until stopped)').argParser(decimal({ above: 0, atMost: 86400 })))
    .action((f: Flags) => runCommand(setExit, () => workerCommand(f), 'treewright worker'));
};

async function workerCommand(f: Flags): Promise<void> {
  const { parseRedisUrl, checkQueueName, checkQueue, startWorker, modelHash, fileHash, namesHash, executionHash } = await import('../../queue/index.ts');
  // the URL, the name, Redis and the queue are checked before the model is loaded
  const target = parseRedisUrl(f.queue);
  const name = checkQueueName(f.queueName);
  const flags = { model: f.model, grammar: f.grammar, db: f.db, names: f.names, executor: f.executor };
  const ex = await openExecution(flags);
  ex.dispose();
  if (!existsSync(join(f.model, 'config.json'))) throw new Error(`${f.model}: no config.json; expected a model folder (config.json, tokenizer.json, tokenizer_config.json, onnx/…)`);
  const local = { model: modelHash(f.model), grammar: fileHash(f.grammar), names: namesHash(ex.names), execution: executionHash(f.db, f.executor) };
  await checkQueue(target, name, local);
  const setup = await openEvalSetup(flags);
  try {
    await setup.warmUp('warm up', { beam: null, maxTokens: null, prefix: null });
    const w = await startWorker({
      target,
      name,
      local,
      maker: (d) => setup.maker(d),
      leaseSeconds: f.lease,
      idleExitSeconds: f.exitWhenIdle,
      onNote: (t) => process.stderr.write(`worker: ${t}\n`),
      onRow: (r) => process.stderr.write(`worker: ${r.id} ${r.mode}: ${r.well_typed ? 'well-typed' : 'invalid'} (${r.latency_ms.toFixed(0)} ms)\n`),
    });
    process.stderr.write(`worker: pulling jobs from ${target.display} (queue ${name}); model ${local.model.slice(0, 12)}…, grammar ${local.grammar.slice(0, 12)}…\n`);
    let signals = 0;
    const onSignal = (sig: NodeJS.Signals) => {
      signals++;
      if (signals > 1) process.exit(130);
      process.stderr.write(`worker: ${sig}: stopping after the job in hand\n`);
      void w.stop();
    };
    process.on('SIGINT', onSignal);
    process.on('SIGTERM', onSignal);
    try {
      const posted = await w.finished;
      process.stderr.write(`worker: stopped; ${posted} rows posted\n`);
    } finally {
      process.off('SIGINT', onSignal);
      process.off('SIGTERM', onSignal);
    }
  } finally {
    await setup.dispose();
  }
}
