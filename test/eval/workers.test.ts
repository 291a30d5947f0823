/**
 * `treewright evaluate --workers 2` (two local decoding processes) against `--workers 1` (this
 * process), with the real CLI and the tiny fixture model: the same results.jsonl line for line
 * (rows come out in the data's order whoever made them; timing fields aside) and the same
 * metrics.json (latency quantiles aside) — also when the two-process run is SIGKILLed mid-run and
 * started again.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { makeData, metricsWithoutTimes, rowsWithoutTimes, run } from '../queue/cli.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-workers-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function lineCount(out: string): number {
  const p = join(out, 'results.jsonl');
  return existsSync(p) ? readFileSync(p, 'utf8').split('\n').length - 1 : 0;
}

describe('treewright evaluate --workers', () => {
  it('two processes, killed and restarted, give the rows and metrics of one', async () => {
    const { db, data } = makeData(dir, 8);
    const args = ['evaluate', '--model', 'test/fixtures/tiny-seq2seq', '--grammar', 'lf', '--db', db, '--data', data, '--max-tokens', '16'];

    const ref = join(dir, 'ref');
    const r0 = await run([...args, '--out', ref, '--workers', '1']).exit;
    expect(r0.code, r0.stderr).toBe(0);
    expect(r0.stderr).toContain('evaluate: rows made by this process');

    const out = join(dir, 'two');
    const first = run([...args, '--out', out, '--workers', '2']);
    const timer = setInterval(() => {
      if (lineCount(out) >= 3) first.child.kill('SIGKILL');
    }, 10);
    const r1 = await first.exit;
    clearInterval(timer);
    expect(r1.signal, r1.stderr).toBe('SIGKILL');
    expect(r1.stderr).toContain('evaluate: rows made by 2 worker processes');
    const kept = lineCount(out);
    expect(kept).toBeLessThan(16);

    const r2 = await run([...args, '--out', out, '--workers', '2']).exit;
    expect(r2.code, r2.stderr).toBe(0);
    expect(r2.stderr).toContain(`evaluate: ${16 - kept} rows written, ${kept} kept from an earlier run`);
    // the same lines in the same order: rows are written in the data's order
    expect(rowsWithoutTimes(out, false)).toEqual(rowsWithoutTimes(ref, false));
    expect(metricsWithoutTimes(out)).toEqual(metricsWithoutTimes(ref));
  }, 600_000);
});
