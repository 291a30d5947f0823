/**
 * A private redis-server for a test file: Debian's `redis-server` on a free loopback port, with no
 * persistence, stopped (SIGTERM) after the file. When the binary is missing, `redisAvailable()`
 * says why and the queue tests skip — unless CI=true, where a missing Redis is a failure
 * (.ci/run installs the Debian package redis-server).
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { createServer } from 'node:net';

export function redisAvailable(): { ok: true } | { ok: false; why: string } {
  const r = spawnSync('redis-server', ['--version'], { encoding: 'utf8' });
  if (r.error === undefined && r.status === 0) return { ok: true };
  const why = 'redis-server is not installed (Debian: apt-get install -y redis-server); the queue tests are skipped';
  if (process.env.CI === 'true') throw new Error(`${why.replace('; the queue tests are skipped', '')}: CI=true requires it`);
  return { ok: false, why };
}

export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createServer();
    s.on('error', reject);
    s.listen(0, '127.0.0.1', () => {
      const a = s.address();
      const port = typeof a === 'object' && a !== null ? a.port : 0;
      s.close(() => resolve(port));
    });
  });
}

export interface RedisServer {
  readonly port: number;
  readonly url: string;
  stop(): Promise<void>;
}

export async function startRedis(): Promise<RedisServer> {
  const port = await freePort();
  const child: ChildProcess = spawn('redis-server', ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no', '--protected-mode', 'yes'], {
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let out = '';
  await new Promise<void>((resolve, reject) => {
    const t = setTimeout(() => reject(new Error(`redis-server did not start within 30 s:\n${out}`)), 30_000);
    child.stdout!.on('data', (d: Buffer) => {
      out += d.toString();
      if (out.includes('Ready to accept connections')) {
        clearTimeout(t);
        resolve();
      }
    });
    child.on('exit', (code) => {
      clearTimeout(t);
      reject(new Error(`redis-server exited (${code}):\n${out}`));
    });
  });
  return {
    port,
    url: `redis://127.0.0.1:${port}`,
    stop: () =>
      new Promise<void>((resolve) => {
        if (child.exitCode !== null) return resolve();
        child.removeAllListeners('exit');
        child.on('exit', () => resolve());
        child.kill('SIGTERM');
      }),
  };
}
