// `treewright serve` as a real process: binds loopback, answers, stops cleanly on SIGTERM.
import { describe, expect, it, vi } from 'vitest';
import { spawn, spawnSync } from 'node:child_process';

vi.setConfig({ testTimeout: 120_000 });

const CLI = 'src/cli/treewright.mjs';

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

  it('a bad flag or file is exit 1 with the flag or file named', () => {
    const port = spawnSync(process.execPath, [CLI, 'serve', '--port', 'http'], { encoding: 'utf8' });
    expect(port.status).toBe(1);
    expect(port.stderr).toBe('--port: found "http"; expected an integer ≥ 0\n');
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
