/**
 * Scaling benchmark (not a test): how fast `treewright evaluate` makes rows in one process, with
 * `--workers 2`, and through the Redis queue with two `treewright worker` processes; and what the
 * queue itself costs per item.
 *
 *   npx tsx test/bench/scale.ts                      # models/coop, lf, 100 test items, 2 rounds
 *   npx tsx test/bench/scale.ts --grammar sql --limit 200 --rounds 3
 *
 * Part 1 (the real CLI and model): in each round the three set-ups run one after the other on the
 * same items (interleaved, so a change in the machine's load hits all three alike):
 *   one:   evaluate --workers 1
 *   two:   evaluate --workers 2
 *   queue: evaluate --queue redis://… with two workers started (and warmed up) before the round
 * Each run writes to a fresh folder. Figures: "wall" = the evaluate command from start to exit
 * (process start, model load and warm-up included); "rows" = from the moment rows start to be
 * made to its exit — for `one` its line `N rows to produce` (model loaded, warmed up), for `two`
 * its line `2 worker processes ready` (both children loaded and warmed up), for `queue` its line
 * `N rows to produce` (the workers were already warm). items/s = items / time (each item is decoded twice).
 *
 * Part 2 (the queue alone): rows made instantly by a stand-in RowMaker, so that only the queue's
 * path is timed — enqueue, a worker pulls the job, posts the row, the collector checks it and
 * appends it to results.jsonl (one fsync) — against the same rows written by the in-process
 * producer (the fsync alone). Per-item overhead = the difference, with one worker.
 */
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { availableParallelism, loadavg, tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { performance } from 'node:perf_hooks';
import { parseArgs } from 'node:util';
import { evaluate, inProcess, loadItems } from '../../src/eval/evaluate.ts';
import type { EvalItem, EvalRow, Mode, RowMaker } from '../../src/eval/run.ts';
import { decodingHash, parseRedisUrl, queueProducer, startWorker } from '../../src/queue/index.ts';
import { startRedis } from '../queue/redis.ts';

const { values: a } = parseArgs({
  options: {
    model: { type: 'string', default: 'models/coop' },
    grammar: { type: 'string', default: 'lf' },
    data: { type: 'string', default: 'models/coop/data/test.jsonl' },
    db: { type: 'string', default: 'grammars/sql/coop.sql' },
    limit: { type: 'string', default: '100' },
    rounds: { type: 'string', default: '2' },
    'overhead-items': { type: 'string', default: '500' },
  },
});
const CLI = resolve('src/cli/treewright.mjs');
const limit = Number(a.limit);
const dir = mkdtempSync(join(tmpdir(), 'tw-scale-'));

interface Proc {
  readonly done: Promise<{ code: number | null; stderr: string; wallMs: number; rowsMs: number }>;
  readonly kill: () => void;
  readonly ready: Promise<void>;
}

function cli(args: readonly string[], readyLine?: RegExp): Proc {
  const t0 = performance.now();
  let tRows = NaN;
  const child = spawn(process.execPath, [CLI, ...args], { stdio: ['ignore', 'ignore', 'pipe'] });
  let err = '';
  let markReady: () => void = () => undefined;
  const ready = new Promise<void>((r) => (markReady = r));
  child.stderr.on('data', (d: Buffer) => {
    err += d.toString();
    // the rows phase starts when the rows start: after the set-up in this process, after the
    // children's set-up with --workers
    const start = Number(args[args.indexOf('--workers') + 1] ?? 1) > 1 && args.includes('--workers') ? /worker processes ready/ : /rows to produce/;
    if (Number.isNaN(tRows) && start.test(err)) tRows = performance.now();
    if (readyLine && readyLine.test(err)) markReady();
  });
  const done = new Promise<{ code: number | null; stderr: string; wallMs: number; rowsMs: number }>((res) =>
    child.on('exit', (code) => {
      const t1 = performance.now();
      res({ code, stderr: err, wallMs: t1 - t0, rowsMs: t1 - tRows });
    }),
  );
  return { done, kill: () => child.kill('SIGTERM'), ready };
}

const common = ['--model', a.model!, '--grammar', a.grammar!, '--db', a.db!];
const evalArgs = ['evaluate', ...common, '--data', a.data!, '--limit', String(limit)];

async function part1(url: string): Promise<void> {
  const rows: string[] = [];
  const ratios: { two: number; queue: number }[] = [];
  process.stdout.write(`machine: ${availableParallelism()} cores; load average at start ${loadavg().map((x) => x.toFixed(1)).join(' ')}\n`);
  process.stdout.write(`items: first ${limit} of ${a.data} (${2 * limit} rows: unconstrained + constrained), grammar ${a.grammar}, model ${a.model}\n\n`);
  process.stdout.write('| round | set-up | wall s | rows s | items/s (wall) | items/s (rows) | load avg |\n|---|---|---|---|---|---|---|\n');
  for (let round = 1; round <= Number(a.rounds); round++) {
    const perSetup: Record<string, number> = {};
    for (const setup of ['one', 'two', 'queue'] as const) {
      const out = join(dir, `${setup}-${round}`);
      let workers: Proc[] = [];
      if (setup === 'queue') {
        workers = [0, 1].map(() => cli(['worker', '--queue', url, ...common], /pulling jobs/));
        await Promise.all(workers.map((w) => w.ready));
      }
      const extra = setup === 'one' ? ['--workers', '1'] : setup === 'two' ? ['--workers', '2'] : ['--queue', url];
      const r = await cli([...evalArgs, '--out', out, ...extra]).done;
      for (const w of workers) w.kill();
      await Promise.all(workers.map((w) => w.done));
      if (r.code !== 0) throw new Error(`${setup} failed:\n${r.stderr}`);
      perSetup[setup] = limit / (r.rowsMs / 1000);
      rows.push(
        `| ${round} | ${setup} | ${(r.wallMs / 1000).toFixed(1)} | ${(r.rowsMs / 1000).toFixed(1)} | ${(limit / (r.wallMs / 1000)).toFixed(2)} | ${perSetup[setup].toFixed(2)} | ${loadavg()[0].toFixed(1)} |`,
      );
      process.stdout.write(rows[rows.length - 1] + '\n');
    }
    ratios.push({ two: perSetup.two / perSetup.one, queue: perSetup.queue / perSetup.one });
  }
  process.stdout.write(`\nitems/s (rows phase) relative to one process, per round: ${ratios.map((r, i) => `round ${i + 1}: two ${r.two.toFixed(2)}×, queue ${r.queue.toFixed(2)}×`).join('; ')}\n`);
}

/** A stand-in RowMaker: returns a fixed row for the job at once (no model, no executor). */
function instantMaker(): RowMaker {
  return {
    row: async (item: EvalItem, mode: Mode): Promise<EvalRow> => ({
      id: item.id, split: item.split, mode, question: item.question, gold: item.gold, text: item.gold, tokens: 1, latency_ms: 0, model_ms: 0, mask_ms: 0,
      mask_share: 0, truncated: false, token_texts: null, valid: true, well_typed: true, executable: true, exact_match: true, execution_accuracy: true,
      failure: null, answer: null, gold_answer: null, gold_error: null,
    }),
  } as unknown as RowMaker;
}

async function part2(url: string): Promise<void> {
  const n = Number(a['overhead-items']);
  const items = loadItems('models/coop/data/train.jsonl', { goldField: 'lf', limit: n });
  const meta = { model: 'stand-in' };
  const H = (c: string) => c.repeat(64);
  const decoding = { beam: null, maxTokens: null, prefix: null };
  const local = { model: H('a'), grammar: H('b'), names: H('c'), execution: H('d') };
  const fp = { ...local, decoding: decodingHash(decoding) };
  const target = parseRedisUrl(url);
  const times: { local: number; queue: number }[] = [];
  // round 0 warms up (Redis scripts loaded, code compiled) and is not counted
  for (let round = 0; round <= 5; round++) {
    let t0 = performance.now();
    await evaluate({ items, producer: inProcess(instantMaker()), outDir: join(dir, `ov-local-${round}`), meta });
    const tLocal = performance.now() - t0;
    const w = await startWorker({ target, name: `overhead${round}`, local, maker: () => instantMaker(), leaseSeconds: 30 });
    t0 = performance.now();
    await evaluate({ items, producer: queueProducer({ target, name: `overhead${round}`, fp, decoding }), outDir: join(dir, `ov-queue-${round}`), meta });
    const tQueue = performance.now() - t0;
    await w.stop();
    if (round > 0) times.push({ local: tLocal / (2 * n), queue: tQueue / (2 * n) });
  }
  process.stdout.write(`\nqueue overhead, ${2 * n} rows made instantly, one worker, ${times.length} rounds after one warm-up (ms per row: in-process write → through the queue → difference):\n`);
  for (const t of times) process.stdout.write(`  ${t.local.toFixed(2)} → ${t.queue.toFixed(2)} → +${(t.queue - t.local).toFixed(2)} ms\n`);
  const d = times.map((t) => t.queue - t.local).sort((x, y) => x - y);
  process.stdout.write(`  median difference: +${d[Math.floor(d.length / 2)].toFixed(2)} ms per row (range +${d[0].toFixed(2)} to +${d[d.length - 1].toFixed(2)})\n`);
  process.stdout.write(`  load average after: ${loadavg().map((x) => x.toFixed(1)).join(' ')}\n`);
}

const redis = await startRedis();
try {
  await part1(redis.url);
  await part2(redis.url);
} finally {
  await redis.stop();
  rmSync(dir, { recursive: true, force: true });
}
