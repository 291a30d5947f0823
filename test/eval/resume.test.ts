import { afterAll, describe, expect, it } from 'vitest';
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

const dir = mkdtempSync(join(tmpdir(), 'tw-resume-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const CHILD = resolve('test/eval/fixtures/eval-child.ts');

function lines(path: string): string[] {
  // complete lines only: whatever follows the last newline is a row still being written
  return existsSync(path) ? readFileSync(path, 'utf8').split('\n').slice(0, -1) : [];
}

/** Runs the child; when `killAfterRows` is set, SIGKILLs it once it has written that many rows. */
function runChild(out: string, killAfterRows: number | null): Promise<{ code: number | null; signal: string | null; stdout: string }> {
  return new Promise((res, rej) => {
    const child = spawn(process.execPath, ['--import', 'tsx', CHILD, out, '12', '15'], { stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (d: Buffer) => {
      stdout += d.toString();
      if (killAfterRows !== null && (stdout.match(/^row /gm)?.length ?? 0) >= killAfterRows) child.kill('SIGKILL');
    });
    child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
    child.on('error', rej);
    child.on('exit', (code, signal) => {
      if (code !== 0 && signal === null) rej(new Error(`child failed (${code}): ${stderr}`));
      else res({ code, signal, stdout });
    });
  });
}

describe('a killed evaluation resumes without losing or duplicating rows', () => {
  it('kill twice mid-run, restart, and compare with an uninterrupted run', async () => {
    const ref = join(dir, 'ref');
    const refRun = await runChild(ref, null);
    expect(refRun.stdout).toContain('done written=36 resumed=0');

    const out = join(dir, 'killed');
    const first = await runChild(out, 5);
    expect(first.signal).toBe('SIGKILL');
    const afterFirst = lines(join(out, 'results.jsonl')).length;
    expect(afterFirst).toBeGreaterThanOrEqual(5);
    expect(afterFirst).toBeLessThan(36);
    expect(existsSync(join(out, 'metrics.json'))).toBe(false);

    const second = await runChild(out, 7); // 7 more rows of the 36
    expect(second.signal).toBe('SIGKILL');
    const afterSecond = lines(join(out, 'results.jsonl')).length;
    expect(afterSecond).toBeGreaterThan(afterFirst);

    const last = await runChild(out, null);
    const m = /done written=(\d+) resumed=(\d+)/.exec(last.stdout)!;
    expect(Number(m[1]) + Number(m[2])).toBe(36);
    expect(Number(m[2])).toBe(afterSecond);

    const strip = (l: string) => {
      const r = JSON.parse(l);
      delete r.latency_ms;
      delete r.mask_share;
      return JSON.stringify(r);
    };
    const got = lines(join(out, 'results.jsonl')).map(strip);
    const want = lines(join(ref, 'results.jsonl')).map(strip);
    expect(new Set(got).size).toBe(36);
    expect(got).toEqual(want);
    const metricsOf = (d: string) => {
      const x = JSON.parse(readFileSync(join(d, 'metrics.json'), 'utf8'));
      for (const s of Object.values(x) as Record<string, Record<string, unknown>>[]) {
        for (const mode of ['constrained', 'unconstrained']) {
          delete s[mode].latency_ms_p50;
          delete s[mode].latency_ms_p95;
        }
      }
      return x;
    };
    expect(metricsOf(out)).toEqual(metricsOf(ref));
  }, 120000);
});
