/**
 * The real CLI, end to end, with the tiny random-weight fixture model: `treewright evaluate` is
 * SIGKILLed mid-run, started again, and must end with exactly one row per item and mode — the
 * same rows (greedy decoding is deterministic) as an uninterrupted run.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { buildSqliteFileFrom } from '../../src/exec/database.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-cli-eval-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const CLI = resolve('src/cli/treewright.mjs');
const db = join(dir, 'coop.sqlite');
const data = join(dir, 'data.jsonl');

function rowsOf(out: string): string[] {
  const p = join(out, 'results.jsonl');
  // complete lines only: whatever follows the last newline is a row still being written
  return existsSync(p) ? readFileSync(p, 'utf8').split('\n').slice(0, -1) : [];
}

function runCli(out: string, killAfterRows: number | null): Promise<{ code: number | null; signal: string | null; stderr: string }> {
  return new Promise((res, rej) => {
    const args = [CLI, 'evaluate', '--model', 'test/fixtures/tiny-seq2seq', '--grammar', 'lf', '--data', data, '--out', out, '--db', db, '--limit', '3', '--max-tokens', '16'];
    const child = spawn(process.execPath, args, { stdio: ['ignore', 'pipe', 'pipe'] });
    let stderr = '';
    child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
    let timer: NodeJS.Timeout | null = null;
    if (killAfterRows !== null) {
      timer = setInterval(() => {
        if (rowsOf(out).length >= killAfterRows) child.kill('SIGKILL');
      }, 20);
    }
    child.on('error', rej);
    child.on('exit', (code, signal) => {
      if (timer) clearInterval(timer);
      res({ code, signal, stderr });
    });
  });
}

describe('treewright evaluate, killed and restarted', () => {
  it('ends with one row per item and mode, identical to an uninterrupted run', async () => {
    buildSqliteFileFrom('grammars/sql/coop.sql', db);
    const programs = readFileSync('grammars/lf/samples/valid.lf', 'utf8').split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#'));
    writeFileSync(data, programs.slice(0, 4).map((lf, i) => JSON.stringify({ id: `q${i}`, split: 'test', question: `which ones, number ${i}?`, lf })).join('\n') + '\n');

    const ref = join(dir, 'ref');
    const r0 = await runCli(ref, null);
    expect(r0.code, r0.stderr).toBe(0);
    expect(r0.stderr).toContain('evaluate: 6 rows written, 0 kept from an earlier run');

    const out = join(dir, 'out');
    const r1 = await runCli(out, 2);
    expect(r1.signal).toBe('SIGKILL');
    const kept = rowsOf(out);
    expect(kept.length).toBeGreaterThanOrEqual(2);
    expect(kept.length).toBeLessThan(6);
    const r2 = await runCli(out, null);
    expect(r2.code, r2.stderr).toBe(0);
    expect(r2.stderr).toContain(`evaluate: ${6 - kept.length} rows written, ${kept.length} kept from an earlier run`);

    const strip = (l: string) => {
      const r = JSON.parse(l);
      for (const k of ['latency_ms', 'model_ms', 'mask_ms', 'mask_share']) delete r[k];
      return JSON.stringify(r);
    };
    const got = rowsOf(out).map(strip);
    expect(got.slice(0, kept.length)).toEqual(kept.map(strip));
    expect(new Set(got.map((l) => { const r = JSON.parse(l); return `${r.id}/${r.mode}`; })).size).toBe(6);
    expect(got).toEqual(rowsOf(ref).map(strip));
    const metrics = JSON.parse(readFileSync(join(out, 'metrics.json'), 'utf8'));
    expect(metrics.test.constrained.valid.n).toBe(3);
    expect(metrics.test.unconstrained.valid.n).toBe(3);
    expect(existsSync(join(out, 'report.html'))).toBe(true);
  }, 180000);
});
