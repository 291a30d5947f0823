/**
 * One evaluation run per --out folder. The reported attack: two runs on one folder interleaved
 * (71 rows for 40 items) and every later run refused the folder. Now the second run stops at once
 * with a message naming the first; a lock left by a killed run (its pid gone) is taken over; a lock
 * from another host is not. The lock is a file created with O_CREAT|O_EXCL (POSIX open(2)).
 */
import { afterAll, describe, expect, it } from 'vitest';
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { hostname, tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { LOCK_FILE, lockOutDir, OutDirLocked } from '../../src/eval/lock.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-lock-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const CHILD = resolve('test/eval/fixtures/eval-child.ts');

function run(out: string): Promise<{ code: number | null; stdout: string; stderr: string }> {
  return new Promise((res, rej) => {
    const child = spawn(process.execPath, ['--import', 'tsx', CHILD, out, '12', '40'], { stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (d: Buffer) => (stdout += d.toString()));
    child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
    child.on('error', rej);
    child.on('exit', (code) => res({ code, stdout, stderr }));
  });
}

/** The pid of a process that has exited. */
function deadPid(): number {
  const r = spawnSync(process.execPath, ['-e', 'process.stdout.write(String(process.pid))']);
  return Number(r.stdout.toString());
}

describe('the --out lock', () => {
  it('two runs at once on one folder: one completes all 36 rows, the other stops with a clear error', async () => {
    const out = join(dir, 'both');
    const [a, b] = await Promise.all([run(out), run(out)]);
    const ok = [a, b].filter((r) => r.code === 0);
    const refused = [a, b].filter((r) => r.code !== 0);
    expect(ok.length).toBe(1);
    expect(refused.length).toBe(1);
    expect(refused[0]!.stderr).toMatch(new RegExp(`${out.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}: another (evaluate )?run .*is writing here; expected one run per --out folder`));
    expect(ok[0]!.stdout).toContain('done written=36 resumed=0');
    const rows = readFileSync(join(out, 'results.jsonl'), 'utf8').trim().split('\n');
    expect(rows.length).toBe(36);
    expect(new Set(rows.map((l) => { const r = JSON.parse(l); return `${r.id}/${r.mode}`; })).size).toBe(36);
    // released at the end: a later run resumes everything
    expect(existsSync(join(out, LOCK_FILE))).toBe(false);
    const again = await run(out);
    expect(again.stdout).toContain('done written=0 resumed=36');
  }, 120_000);

  it('a lock left by a killed run on this host is taken over; one from another host is not', () => {
    const out = join(dir, 'stale');
    mkdirSync(out);
    writeFileSync(join(out, LOCK_FILE), JSON.stringify({ pid: deadPid(), host: hostname(), started: '2026-01-01T00:00:00.000Z', token: 'old' }));
    const release = lockOutDir(out);
    expect(JSON.parse(readFileSync(join(out, LOCK_FILE), 'utf8')).pid).toBe(process.pid);
    expect(() => lockOutDir(out)).toThrow(OutDirLocked);
    release();
    expect(existsSync(join(out, LOCK_FILE))).toBe(false);

    writeFileSync(join(out, LOCK_FILE), JSON.stringify({ pid: deadPid(), host: 'orchard-host-2', started: '2026-01-01T00:00:00.000Z', token: 'x' }));
    expect(() => lockOutDir(out)).toThrow(`${out}: another evaluate run (pid `);
    expect(() => lockOutDir(out)).toThrow(`on orchard-host-2, started 2026-01-01T00:00:00.000Z) is writing here; expected one run per --out folder (wait for it to finish, use another --out, or remove ${join(out, LOCK_FILE)} if that run is gone)`);
  });
});
