// `treewright serve` as a real process: binds loopback, answers, stops cleanly on SIGTERM.
import { describe, expect, it, vi } from 'vitest';
import { spawn, spawnSync } from 'node:child_process';
import { copyFileSync, existsSync, mkdtempSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { Registry } from '../../src/server/index.ts';

vi.setConfig({ testTimeout: 120_000 });

const CLI = resolve('src/cli/treewright.mjs');

/** Starts `treewright serve` with `args`; resolves with the child and its URL once it listens. */
function serve(args: string[], cwd?: string): Promise<{ child: ReturnType<typeof spawn>; url: string; err: () => string }> {
  const child = spawn(process.execPath, [CLI, 'serve', ...args], { stdio: ['ignore', 'pipe', 'pipe'], cwd });
  let out = '';
  let err = '';
  child.stderr!.on('data', (d: Buffer) => (err += d));
  return new Promise((res, reject) => {
    child.stdout!.on('data', (d: Buffer) => {
      out += d;
      const m = /listening on (http:\/\/\S+)\n/.exec(out);
      if (m) res({ child, url: m[1]!, err: () => err });
    });
    child.on('exit', (code) => reject(new Error(`exited ${code} before listening: ${err}`)));
  });
}

const stop = (child: ReturnType<typeof spawn>) =>
  new Promise<number | null>((res) => {
    child.on('exit', (c) => res(c));
    child.kill('SIGTERM');
  });

describe('treewright serve', () => {
  it('listens on 127.0.0.1 by default, serves the API and exits 0 on SIGTERM', async () => {
    const child = spawn(process.execPath, [CLI, 'serve', '--port', '0', '--model', 'test/fixtures/tiny-seq2seq', '--grammar', 'lf', '--threads', '1'], { stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    child.stderr.on('data', (d: Buffer) => (err += d));
    const url = await new Promise<string>((resolve, reject) => {
      child.stdout.on('data', (d: Buffer) => {
        out += d;
        const m = /listening on (http:\/\/\S+)\n/.exec(out);
        if (m) resolve(m[1]);
      });
      child.on('exit', (code) => reject(new Error(`exited ${code} before listening: ${err}`)));
    });
    expect(url).toMatch(/^http:\/\/127\.0\.0\.1:\d+\/$/);
    const models = await (await fetch(`${url}api/models`)).json();
    expect(models.models.map((m: { id: string }) => m.id)).toEqual(['tiny-seq2seq']);
    const grammars = await (await fetch(`${url}api/grammars`)).json();
    expect(grammars.grammars.map((g: { id: string }) => g.id)).toEqual(['lf']);
    const code = await new Promise<number | null>((resolve) => {
      child.on('exit', (c) => resolve(c));
      child.kill('SIGTERM');
    });
    expect(code).toBe(0);
    expect(err).toBe('');
  });

  it('from a folder outside the project: shipped grammar names and --db script.sql', async () => {
    const away = mkdtempSync(join(tmpdir(), 'tw-serve-away-'));
    try {
      copyFileSync('grammars/sql/coop.sql', join(away, 'coop.sql'));
      const { child, url, err } = await serve(['--port', '0', '--model', resolve('test/fixtures/tiny-seq2seq'), '--grammar', 'sql', '--grammar', 'lf', '--db', 'coop.sql', '--threads', '1'], away);
      const grammars = (await (await fetch(`${url}api/grammars`)).json()).grammars as { id: string; file: string; executor: boolean; name_sets: Record<string, number> }[];
      expect(grammars.map((g) => [g.id, g.file, g.executor])).toEqual([
        ['sql', resolve('grammars/sql/sql.twg'), true],
        ['lf', resolve('grammars/lf/lf.twg'), true],
      ]);
      // the names come from the database built from the script: five tables, and the fact base
      expect(grammars[0]!.name_sets.Table).toBe(5);
      expect(grammars[1]!.name_sets.Entity).toBeGreaterThan(0);
      const post = (route: string, body: unknown) => fetch(`${url}api/${route}`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });
      const count = await (await post('execute', { grammar: 'sql', text: 'SELECT COUNT(*) FROM sheds' })).json();
      expect(count.value.rows[0][0]).toBeGreaterThan(0);
      expect(await stop(child)).toBe(0);
      expect(err()).toBe('');
    } finally {
      rmSync(away, { recursive: true, force: true });
    }
  });

  it('Registry.open builds a --db script into a private folder and removes it on close', async () => {
    const away = mkdtempSync(join(tmpdir(), 'tw-serve-db-'));
    try {
      const script = join(away, 'coop.sql');
      copyFileSync('grammars/sql/coop.sql', script);
      const reg = await Registry.open({ models: [], grammars: ['sql'], db: script, warm: false });
      const folder = dirname(reg.dbPath);
      expect(dirname(folder)).toBe(tmpdir());
      expect(statSync(folder).mode & 0o777).toBe(0o700);
      await reg.close();
      expect(existsSync(folder)).toBe(false);
      writeFileSync(join(away, 'evil.sql'), "ATTACH 'planted.sqlite' AS p;");
      await expect(Registry.open({ models: [], grammars: ['sql'], db: join(away, 'evil.sql'), warm: false })).rejects.toThrow(
        `--db ${join(away, 'evil.sql')}:1:1: ATTACH is not allowed in a script;`,
      );
      expect(existsSync('planted.sqlite')).toBe(false);
    } finally {
      rmSync(away, { recursive: true, force: true });
    }
  });

  it('a bad flag or file is exit 1 with the flag or file named', () => {
    const port = spawnSync(process.execPath, [CLI, 'serve', '--port', 'http'], { encoding: 'utf8' });
    expect(port.status).toBe(1);
    expect(port.stderr).toBe("error: option '--port <port>' argument 'http' is invalid. expected an integer from 0 to 65535\n");
    const model = spawnSync(process.execPath, [CLI, 'serve', '--port', '0', '--model', 'no/such/model'], { encoding: 'utf8' });
    expect(model.status).toBe(1);
    expect(model.stderr).toContain('no/such/model');
  });

  it('a port in use is exit 1 naming --port', async () => {
    const { createServer } = await import('node:net');
    const blocker = createServer();
    await new Promise<void>((r) => blocker.listen(0, '127.0.0.1', () => r()));
    const port = (blocker.address() as { port: number }).port;
    try {
      const res = spawnSync(process.execPath, [CLI, 'serve', '--port', String(port), '--model', 'test/fixtures/tiny-seq2seq', '--grammar', 'arith'], { encoding: 'utf8' });
      expect(res.status).toBe(1);
      expect(res.stderr).toMatch(new RegExp(`^--host 127\\.0\\.0\\.1 --port ${port}: cannot listen there \\(EADDRINUSE: `));
    } finally {
      blocker.close();
    }
  });
});
