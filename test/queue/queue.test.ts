/**
 * The Redis job queue end to end, with a real redis-server and the real CLI (the tiny fixture
 * model; greedy decoding is deterministic, so any process makes the same row for a job):
 * - a worker started with another database refuses the first job it gets, says which part of the
 *   set-up differs, and exits 1; the job goes back to the queue;
 * - two good workers then share the jobs; one is SIGKILLed while it holds a job (seen in Redis:
 *   the job's `pb` field names the worker); the other runs that job once its lease runs out;
 * - results.jsonl holds one row per item and mode, and rows and metrics.json equal an
 *   in-process run's (`--workers 1`), timing fields aside.
 * Skipped, with the reason printed, when redis-server is not installed (not under CI=true).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { copyFileSync, mkdtempSync, rmSync } from 'node:fs';
import { hostname, tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { Redis } from 'ioredis';
import { metricsWithoutTimes, makeData, rowsWithoutTimes, run } from './cli.ts';
import { redisAvailable, startRedis, type RedisServer } from './redis.ts';

const available = redisAvailable();
if (!available.ok) console.warn(`test/queue/queue.test.ts: ${available.why}`);

describe.skipIf(!available.ok)('treewright evaluate --queue with treewright worker, one worker killed', () => {
  const dir = mkdtempSync(join(tmpdir(), 'tw-queue-'));
  let redis: RedisServer;
  beforeAll(async () => {
    redis = await startRedis();
  }, 60_000);
  afterAll(async () => {
    await redis?.stop();
    rmSync(dir, { recursive: true, force: true });
  });

  it('collects the same rows and metrics as one process, with no row lost or doubled', async () => {
    const { db, data } = makeData(dir, 9);
    const common = ['--model', 'test/fixtures/tiny-seq2seq', '--grammar', 'lf', '--db', db];
    const evalArgs = [...common, '--data', data, '--max-tokens', '16'];

    const ref = join(dir, 'ref');
    const r0 = await run(['evaluate', ...evalArgs, '--out', ref, '--workers', '1']).exit;
    expect(r0.code, r0.stderr).toBe(0);

    // a database with one header byte changed (PRAGMA user_version): same names, other bytes
    const otherDb = join(dir, 'other.sqlite');
    copyFileSync(db, otherDb);
    const h = new Database(otherDb);
    h.pragma('user_version = 7');
    h.close();

    const lease = ['--lease', '3'];
    const wrong = run(['worker', '--queue', redis.url, '--model', 'test/fixtures/tiny-seq2seq', '--grammar', 'lf', '--db', otherDb, ...lease]);
    await wrong.waitFor(/worker: pulling jobs/, 120_000);

    const out = join(dir, 'out');
    const collector = run(['evaluate', ...evalArgs, '--out', out, '--queue', redis.url]);
    const w = await wrong.exit;
    expect(w.code, w.stderr).toBe(1);
    expect(w.stderr).toMatch(/treewright worker: job e1-[0-9a-f]{40}: made for another set-up — execution [0-9a-f]{12}… here [0-9a-f]{12}…; this worker refuses it/);
    expect(w.stderr).not.toMatch(/\n\s+at /); // no stack trace
    expect(w.stderr).not.toMatch(/ rows? posted|: well-typed|: invalid/);

    const victim = run(['worker', '--queue', redis.url, ...common, ...lease]);
    const survivor = run(['worker', '--queue', redis.url, ...common, ...lease, '--exit-when-idle', '8']);

    // kill the victim while it holds a job, after it has posted at least one row
    const client = new Redis({ host: '127.0.0.1', port: redis.port, maxRetriesPerRequest: 1 });
    const victimName = `${hostname()}:${victim.child.pid}`;
    await victim.waitFor(/worker: q\d+ \w+: /, 180_000);
    let heldJob: string | null = null;
    const deadline = Date.now() + 120_000;
    while (heldJob === null && Date.now() < deadline) {
      for (const id of await client.lrange('treewright:treewright.jobs:active', 0, -1)) {
        if ((await client.hget(`treewright:treewright.jobs:${id}`, 'pb')) === victimName) heldJob = id;
      }
      if (heldJob === null) await new Promise((r) => setTimeout(r, 5));
    }
    expect(heldJob, `the victim never held a job; its stderr:\n${victim.stderr()}`).not.toBeNull();
    victim.child.kill('SIGKILL');
    const v = await victim.exit;
    expect(v.signal).toBe('SIGKILL');
    // null when the victim finished the job in the moment between the look and the kill
    const held = JSON.parse((await client.hget(`treewright:treewright.jobs:${heldJob}`, 'data')) ?? 'null') as { item: { id: string }; mode: string } | null;
    await client.quit();

    const c = await collector.exit;
    expect(c.code, c.stderr).toBe(0);
    expect(c.stderr).toContain('evaluate: 18 rows written, 0 kept from an earlier run');
    const s = await survivor.exit;
    expect(s.code, s.stderr).toBe(0);
    // the job the victim held (unfinished when it died) was run again, by the survivor
    if (held !== null) expect(s.stderr).toContain(`worker: ${held.item.id} ${held.mode}: `);

    const got = rowsWithoutTimes(out);
    expect(got.length).toBe(18);
    expect(new Set(got.map((l) => { const r = JSON.parse(l) as { id: string; mode: string }; return `${r.id}/${r.mode}`; })).size).toBe(18);
    expect(got).toEqual(rowsWithoutTimes(ref));
    expect(metricsWithoutTimes(out)).toEqual(metricsWithoutTimes(ref));
  }, 900_000);
});
