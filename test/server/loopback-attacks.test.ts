/**
 * The reported attacks on a real `treewright serve` process over a loopback port: each request must
 * get the documented JSON error shape with a status below 500 (or 503/504); while each attack is in
 * flight and after it, a GET is answered (polled every 50 ms: the slowest answer is printed and
 * asserted against a bound wide enough for a loaded shared machine — the target on an idle machine
 * is 200 ms); the server's peak resident memory (VmHWM in /proc/PID/status, Linux proc(5)) stays
 * under 1 GiB. The token-regex attacks are in the regex front-end's own suite.
 */
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

vi.setConfig({ testTimeout: 180_000, hookTimeout: 180_000 });

const CLI = resolve('src/cli/treewright.mjs');
const GET_BOUND_MS = 2000;
let child: ChildProcess;
let url = '';
const dir = mkdtempSync(join(tmpdir(), 'tw-loopback-'));
const slowest: Record<string, number> = {};

beforeAll(async () => {
  child = spawn(process.execPath, [CLI, 'serve', '--port', '0', '--model', 'test/fixtures/tiny-seq2seq', '--threads', '1', '--body-limit', String(8 << 20), '--max-active', '1', '--exec-active', '1'], { stdio: ['ignore', 'pipe', 'pipe'] });
  let out = '';
  let err = '';
  child.stderr!.on('data', (d: Buffer) => (err += d));
  url = await new Promise<string>((res, rej) => {
    child.stdout!.on('data', (d: Buffer) => {
      out += d;
      const m = /listening on (http:\/\/\S+)\n/.exec(out);
      if (m) res(m[1]!);
    });
    child.on('exit', (code) => rej(new Error(`exited ${code} before listening: ${err}`)));
  });
});

afterAll(async () => {
  process.stdout.write(`loopback attacks: slowest GET /api/grammars during each attack (ms): ${JSON.stringify(slowest)}\n`);
  if (child && child.exitCode === null) {
    await new Promise((r) => {
      child.on('exit', r);
      child.kill('SIGTERM');
    });
  }
  rmSync(dir, { recursive: true, force: true });
});

const post = (route: string, body: string) => fetch(`${url}api/${route}`, { method: 'POST', headers: { 'content-type': 'application/json' }, body });

/** Runs `attack` while polling GET /api/grammars; records the slowest answer, then checks one more GET after it. */
async function underAttack<T>(name: string, attack: () => Promise<T>): Promise<T> {
  let stop = false;
  let worst = 0;
  const poll = (async () => {
    while (!stop) {
      const t0 = performance.now();
      const r = await fetch(`${url}api/grammars`);
      await r.arrayBuffer();
      expect(r.status).toBe(200);
      worst = Math.max(worst, performance.now() - t0);
      await new Promise((res) => setTimeout(res, 50));
    }
  })();
  const result = await attack();
  stop = true;
  await poll;
  const t0 = performance.now();
  expect((await fetch(`${url}api/grammars`)).status).toBe(200);
  worst = Math.max(worst, performance.now() - t0);
  slowest[name] = Math.round(worst);
  expect(worst, `${name}: slowest GET`).toBeLessThan(GET_BOUND_MS);
  return result;
}

async function documented(res: Response, status: number, code: string): Promise<{ code: string; message: string; location?: string }> {
  expect(res.headers.get('content-type')).toMatch(/^application\/json/);
  const body = (await res.json()) as { error: { code: string; message: string; location?: string } };
  expect({ status: res.status, code: body.error.code }, body.error.message.slice(0, 300)).toEqual({ status, code });
  return body.error;
}

const deepNeg = (n: number): string => '{"kind":"neg","operand":'.repeat(n) + '{"kind":"num","value":1}' + '}'.repeat(n);

describe('attacks on a loopback server', () => {
  it('deep nesting in every stage', async () => {
    await underAttack('deep parse', async () => {
      for (const [grammar, text] of [
        ['arith', '('.repeat(136) + '1' + ')'.repeat(136)],
        ['sql', 'SELECT name FROM growers WHERE ' + '('.repeat(168) + '1 = 1' + ')'.repeat(168)],
        ['json', '['.repeat(273) + ']'.repeat(273)],
        ['sql', 'SELECT name FROM growers WHERE ' + 'NOT '.repeat(629) + '1 = 1'],
      ]) {
        await documented(await post('parse', JSON.stringify({ grammar, text })), 422, 'parse_error');
      }
    });
    await underAttack('deep trees', async () => {
      await documented(await post('print', `{"grammar":"arith","tree":${deepNeg(5000)}}`), 400, 'too_deep');
      await documented(await post('execute', `{"grammar":"lf","tree":${deepNeg(5000)}}`), 400, 'too_deep');
      await documented(await post('parse', '{"grammar":"arith","text":' + '['.repeat(5143)), 400, 'malformed_json');
      await documented(await post('parse', `{"grammar":${'['.repeat(5000)}1${']'.repeat(5000)},"text":"x"}`), 400, 'too_deep');
    });
    await underAttack('deep description', async () => {
      const text = 'grammar g\nstart E\nspace " "\ntoken N = /[0-9]+/ as int\nsort E { a(x: N?) = ' + '[ '.repeat(3000) + 'x' + ' ]'.repeat(3000) + '; }\n';
      const r = await post('check', JSON.stringify({ text, file: 'deep.twg' }));
      expect(r.status).toBe(200);
      expect(((await r.json()) as { diagnostics: { code: string }[] }).diagnostics.map((d) => d.code)).toEqual(['too-deep']);
    });
  });

  it('100,000 names', async () => {
    const names = Array.from({ length: 100_000 }, (_, i) => `f${i.toString(36)}`);
    await underAttack('100k names', async () => {
      await documented(await post('mask', JSON.stringify({ grammar: 'arith', prefix: 'f', names: { Func: names } })), 400, 'invalid_request');
      const long = Array.from({ length: 40_000 }, (_, i) => `f${i.toString(36).padStart(4, '0')}tail${(i * 7919).toString(36)}`);
      await documented(await post('mask', JSON.stringify({ grammar: 'arith', prefix: 'f', names: { Func: long } })), 400, 'invalid_names');
    });
  });

  it('SQL through a checked description, a tree naming a schema table, a file field', async () => {
    const raw = 'grammar sql\nstart Q\nspace " "\ntoken Raw = /[A-Za-z_*(),.=\']+(?: [A-Za-z_*(),.=\']+)*/ as text\ntoken Id = /[a-z_]+/ as text\nnames Table of Id\nsort Q {\n  select(body: Raw) = body;\n  t(table: Table) = "T" table;\n}\n';
    mkdirSync(join(dir, 'samples'));
    writeFileSync(join(dir, 'samples', 'names.json'), 'TOP SECRET: not json');
    await underAttack('executor binding', async () => {
      const c = (await (await post('check', JSON.stringify({ text: raw, file: join(dir, 'raw.twg') }))).json()) as { id: string };
      await documented(await post('execute', JSON.stringify({ grammar: c.id, text: 'SELECT file FROM pragma_database_list' })), 422, 'no_executor');
      const tree = ((await (await post('parse', JSON.stringify({ grammar: 'sql', text: 'SELECT COUNT(*) FROM sheds' }))).json()) as { tree: Record<string, unknown> }).tree;
      await documented(await post('execute', JSON.stringify({ grammar: 'sql', tree: { ...tree, from: 'sqlite_master' } })), 422, 'invalid_tree');
      const listed = await (await fetch(`${url}api/grammars`)).text();
      expect(listed).not.toContain('SECRET');
    });
  });

  it('slow SQL does not hold the model slot', async () => {
    const slow = 'SELECT lots.id FROM lots JOIN sheds ON lots.id = lots.id JOIN growers ON lots.id = lots.id JOIN orchards ON lots.id = lots.id JOIN varieties ON lots.id = lots.id ORDER BY growers.name, orchards.name DESC LIMIT 3';
    await underAttack('slow SQL', async () => {
      let finished = 0;
      const queries = Array.from({ length: 8 }, () => post('execute', JSON.stringify({ grammar: 'sql', text: slow })).then(async (r) => {
        finished++;
        expect([200, 422, 503]).toContain(r.status);
        await r.arrayBuffer();
      }));
      await new Promise((r) => setTimeout(r, 50));
      const d = await post('decode', JSON.stringify({ question: 'how many sheds', grammar: 'sql', max_tokens: 8 }));
      expect(d.status).toBe(200);
      expect(finished).toBeLessThan(8);
      await Promise.all(queries);
    });
  });

  it('peak server memory stays under 1 GiB', () => {
    const status = `/proc/${child.pid}/status`;
    if (!existsSync(status)) return; // proc(5) is Linux-only
    const hwm = /VmHWM:\s+(\d+) kB/.exec(readFileSync(status, 'utf8'));
    expect(hwm).not.toBeNull();
    const mb = Number(hwm![1]) / 1024;
    process.stdout.write(`loopback attacks: server peak RSS (VmHWM) ${mb.toFixed(0)} MB\n`);
    expect(mb).toBeLessThan(1024);
  });
});
