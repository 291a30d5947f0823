/**
 * The server under attack: the reproducers reported against the loopback server, sent as real HTTP
 * requests through fastify's inject. Every answer must be the documented JSON error shape with a
 * status below 500 (or 503/504), and the server must keep answering. Status meanings follow RFC 9110
 * §15.5 (400 Bad Request, 413 Content Too Large, 422 Unprocessable Content).
 */
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import type { FastifyInstance, LightMyRequestResponse } from 'fastify';
import { buildServer, Registry } from '../../src/server/index.ts';
import { MAX_JSON_DEPTH } from '../../src/util/depth.ts';

vi.setConfig({ testTimeout: 120_000, hookTimeout: 120_000 });

let app: FastifyInstance;
beforeAll(async () => {
  const registry = await Registry.open({ models: [], warm: false });
  app = await buildServer(registry);
});
afterAll(async () => {
  await app?.close();
});

const send = (url: string, body: string) => app.inject({ method: 'POST', url, payload: body, headers: { 'content-type': 'application/json' } });

/** The documented error shape: {"error": {"code", "message", "location"?, "line"?, "column"?}}, status < 500 or 503/504. */
function documentedError(res: LightMyRequestResponse, status: number, code: string): { code: string; message: string; location?: string } {
  expect(res.headers['content-type']).toMatch(/^application\/json/);
  const body = res.json() as { error: { code: string; message: string; location?: string } };
  expect(Object.keys(body)).toEqual(['error']);
  expect(typeof body.error.message).toBe('string');
  expect({ status: res.statusCode, code: body.error.code }, body.error.message.slice(0, 300)).toEqual({ status, code });
  return body.error;
}

/** The server still answers a GET at once. */
async function stillAnswers(): Promise<void> {
  const t0 = performance.now();
  const res = await app.inject({ method: 'GET', url: '/api/grammars' });
  expect(res.statusCode).toBe(200);
  // generous on a loaded shared machine; the point is "not blocked"
  expect(performance.now() - t0).toBeLessThan(2000);
}

const deepNeg = (n: number): string => '{"kind":"neg","operand":'.repeat(n) + '{"kind":"num","value":1}' + '}'.repeat(n);

describe('deep nesting', () => {
  const parses: [string, string, string][] = [
    ['arith parentheses, depth 136', 'arith', '('.repeat(136) + '1' + ')'.repeat(136)],
    ['SQL parentheses, depth 168', 'sql', 'SELECT name FROM growers WHERE ' + '('.repeat(168) + '1 = 1' + ')'.repeat(168)],
    ['JSON arrays, depth 273 (a valid document)', 'json', '['.repeat(273) + ']'.repeat(273)],
    ['SQL NOT, depth 629', 'sql', 'SELECT name FROM growers WHERE ' + 'NOT '.repeat(629) + '1 = 1'],
  ];
  for (const [what, grammar, text] of parses) {
    it(`/api/parse: ${what} is a located 422, not a 500`, async () => {
      const e = documentedError(await send('/api/parse', JSON.stringify({ grammar, text })), 422, 'parse_error');
      expect(e.location).toMatch(/^<input>:1:\d+$/);
      expect(e.message).toContain('nesting limit');
      await stillAnswers();
    });
  }

  it('/api/print and /api/execute on a 5,000-deep tree: 400 too_deep at the JSON path', async () => {
    for (const [url, grammar] of [['/api/print', 'arith'], ['/api/execute', 'lf'], ['/api/execute', 'sql']] as const) {
      const e = documentedError(await send(url, `{"grammar":"${grammar}","tree":${deepNeg(5000)}}`), 400, 'too_deep');
      // the body's outermost object is level 1, so the first value too deep is MAX_JSON_DEPTH - 1 operands down the tree
      expect(e.location).toBe('$.tree' + '.operand'.repeat(MAX_JSON_DEPTH - 1));
    }
    await stillAnswers();
  });

  it('a tree just inside the limit prints', async () => {
    const res = await send('/api/print', `{"grammar":"arith","tree":${deepNeg(MAX_JSON_DEPTH - 2)}}`);
    expect(res.statusCode).toBe(200);
    expect(res.json().text).toBe('-'.repeat(MAX_JSON_DEPTH - 2) + '1');
  });

  it('a malformed body with 5,143 open brackets: 400 malformed_json with line and column', async () => {
    const e = documentedError(await send('/api/parse', '{"grammar":"arith","text":' + '['.repeat(5143)), 400, 'malformed_json');
    expect(e.location).toMatch(/^request body:1:\d+$/);
  });

  it('a deep ill-typed field gets our error body, not the framework default', async () => {
    const deep = '['.repeat(5000) + '1' + ']'.repeat(5000);
    const e = documentedError(await send('/api/parse', `{"grammar":${deep},"text":"x"}`), 400, 'too_deep');
    expect(e.location).toBe('$.grammar' + '[0]'.repeat(MAX_JSON_DEPTH - 1));
    // within the depth limit the schema's own message names the field
    const shallow = '['.repeat(300) + '1' + ']'.repeat(300);
    const e2 = documentedError(await send('/api/parse', `{"grammar":${shallow},"text":"x"}`), 400, 'invalid_request');
    expect(e2.message).toBe('$.grammar: found an array; expected a string');
    await stillAnswers();
  });
});

/** A description named `sql` whose one token takes raw text: checked through the API it must not reach the SQL executor. */
const RAW_SQL = [
  'grammar sql',
  'start Q',
  'space " "',
  "token Raw = /[A-Za-z_*(),.=']+(?: [A-Za-z_*(),.=']+)*/ as text",
  'token Id = /[a-z_]+/ as text',
  'names Table of Id',
  'sort Q {',
  '  select(body: Raw) = body;',
  '  t(table: Table) = "T" table;',
  '}',
  '',
].join('\n');

describe('executors are bound by the operator, not by a grammar name', () => {
  it('a checked description named sql gets no executor: 422 no_executor, nothing runs', async () => {
    const c = (await send('/api/check', JSON.stringify({ text: RAW_SQL, file: 'raw.twg' }))).json();
    expect(c.ok, JSON.stringify(c.diagnostics)).toBe(true);
    const grammars = (await app.inject({ method: 'GET', url: '/api/grammars' })).json().grammars as { id: string; executor: boolean }[];
    expect(grammars.find((g) => g.id === c.id)?.executor).toBe(false);
    const e = documentedError(await send('/api/execute', JSON.stringify({ grammar: c.id, text: 'SELECT sql FROM sqlite_master' })), 422, 'no_executor');
    expect(e.location).toBe('$.grammar');
  });

  it('with --checked-executors it runs, and the SQL child still refuses schema tables, pragma functions and PRAGMA', async () => {
    const registry = await Registry.open({ models: [], warm: false, grammars: ['sql'], checkedExecutors: true });
    const a = await buildServer(registry);
    try {
      const c = (await a.inject({ method: 'POST', url: '/api/check', payload: { text: RAW_SQL, file: 'raw.twg' } })).json();
      const run = async (sql: string) => (await a.inject({ method: 'POST', url: '/api/execute', payload: { grammar: c.id, text: sql } })).json();
      expect((await run('SELECT sql FROM sqlite_master')).error.message).toBe("<input>: the query reads SQLite's schema table, which is not bound for queries");
      expect((await run('SELECT file FROM pragma_database_list')).error.message).toBe('<input>: the query uses a table-valued function or virtual table (pragma_…, json_each, …), which is not allowed');
      expect((await run('PRAGMA database_list')).error.message).toBe('<input>: only SELECT statements may run (found PRAGMA)');
      expect((await run('SELECT sqlite_version()')).error.message).toBe('<input>: the query calls sqlite_version(), which is not allowed');
      expect((await run('SELECT name FROM growers')).ok).toBe(true);
    } finally {
      await a.close();
    }
  });

  it('a copy of the SQL description given with --grammar has no executor unless --bind-executor binds it', async () => {
    const { mkdtempSync, copyFileSync } = await import('node:fs');
    const { tmpdir } = await import('node:os');
    const { join } = await import('node:path');
    const dir = mkdtempSync(join(tmpdir(), 'tw-exec-bind-'));
    const copy = join(dir, 'my-sql.twg');
    copyFileSync('grammars/sql/sql.twg', copy);
    for (const [executors, expected] of [[undefined, false], [[`sql=${copy}`], true]] as const) {
      const registry = await Registry.open({ models: [], warm: false, grammars: [copy, 'lf'], executors });
      try {
        expect([registry.grammar('sql')!.execute !== null, registry.grammar('lf')!.execute !== null]).toEqual([expected, true]);
      } finally {
        await registry.close();
      }
    }
    await expect(Registry.open({ models: [], warm: false, executors: ['shell=x.twg'] })).rejects.toThrow('--bind-executor shell=x.twg: expected KIND=GRAMMAR with KIND one of sql, lf (e.g. sql=my-sql.twg)');
  });
});

describe('the tree route gets the text route\'s checks', () => {
  it('a table refused as text is refused as a tree, at its JSON path', async () => {
    const tree = (await send('/api/parse', JSON.stringify({ grammar: 'sql', text: 'SELECT COUNT(*) FROM sheds' }))).json().tree;
    const asText = documentedError(await send('/api/execute', JSON.stringify({ grammar: 'sql', text: 'SELECT COUNT(*) FROM sqlite_master' })), 422, 'parse_error');
    expect(asText.message).toMatch(/^<input>:1:22: unknown name 'sqlite_master' for Table/);
    const e = documentedError(await send('/api/execute', JSON.stringify({ grammar: 'sql', tree: { ...tree, from: 'sqlite_master' } })), 422, 'invalid_tree');
    expect(e).toMatchObject({ location: '$.tree.from', message: "$.tree.from: unknown name 'sqlite_master' for Table" });
  });
});

describe('no request field names a file the server reads', () => {
  it('/api/check "file" is a label: <folder>/samples/names.json is not read, its content not echoed', async () => {
    const { mkdtempSync, mkdirSync, writeFileSync } = await import('node:fs');
    const { tmpdir } = await import('node:os');
    const { join } = await import('node:path');
    const dir = mkdtempSync(join(tmpdir(), 'tw-check-file-'));
    mkdirSync(join(dir, 'samples'));
    for (const content of ['TOP SECRET: not json', '{"Func": ["leaked_name"]}']) {
      writeFileSync(join(dir, 'samples', 'names.json'), content);
      const text = `grammar probe${content.length}\nstart E\nspace " "\ntoken Name = /[a-z_]+/ as text\nnames Func of Name\nsort E { call(fn: Func) = fn "()"; }\n`;
      const res = await send('/api/check', JSON.stringify({ text, file: join(dir, 'probe.twg') }));
      expect(res.statusCode).toBe(200);
      expect(res.body).not.toContain('SECRET');
      const id = res.json().id as string;
      const listed = (await app.inject({ method: 'GET', url: '/api/grammars' })).body;
      expect(listed).not.toContain('SECRET');
      expect(listed).not.toContain('leaked_name');
      const g = (JSON.parse(listed).grammars as { id: string; name_sets: Record<string, number> | null; names_problem: string | null }[]).find((x) => x.id === id)!;
      expect(g.names_problem).toMatch(/^no bindings for the name set Func/);
    }
  });
});

describe('oversized name sets', () => {
  it('100,000 names are a located 400 before any work; 40,000 long ones past the trie limit too, not a 500', async () => {
    const registry = await Registry.open({ models: ['test/fixtures/tiny-seq2seq'], warm: false, threads: 1, grammars: ['arith'] });
    const a = await buildServer(registry, { bodyLimit: 8 << 20 });
    try {
      const many = Array.from({ length: 100_000 }, (_, i) => `f${i.toString(36)}`);
      const res = await a.inject({ method: 'POST', url: '/api/mask', payload: { grammar: 'arith', prefix: 'f', names: { Func: many } } });
      expect(documentedError(res, 400, 'invalid_request')).toMatchObject({ location: '$.names.Func', message: '$.names.Func: found an array; expected at most 65536 items' });
      // distinct tails: about four trie nodes per name
      const long = Array.from({ length: 40_000 }, (_, i) => `f${i.toString(36).padStart(4, '0')}tail${(i * 7919).toString(36)}`);
      const res2 = await a.inject({ method: 'POST', url: '/api/mask', payload: { grammar: 'arith', prefix: 'f', names: { Func: long } } });
      const e = documentedError(res2, 400, 'invalid_names');
      expect(e).toMatchObject({ location: '$.names.Func', message: '$.names.Func: the members need more than 65536 trie nodes; expected a smaller name set' });
    } finally {
      await a.close();
    }
  });
});

describe('slow SQL never holds the model slots', () => {
  it('a mask request is answered while slow queries wait for the executors\' own slot', async () => {
    const registry = await Registry.open({ models: ['test/fixtures/tiny-seq2seq'], warm: false, threads: 1, grammars: ['sql', 'arith'], sqlTimeoutMs: 300 });
    const a = await buildServer(registry, { maxActive: 1, maxQueued: 16, execActive: 1, execQueued: 16 });
    try {
      // a five-table cross product sorted: about 0.7 s in SQLite here, stopped at the 300 ms limit
      const slow = 'SELECT lots.id FROM lots JOIN sheds ON lots.id = lots.id JOIN growers ON lots.id = lots.id JOIN orchards ON lots.id = lots.id JOIN varieties ON lots.id = lots.id ORDER BY growers.name, orchards.name DESC LIMIT 3';
      let finished = 0;
      const queries = Array.from({ length: 6 }, () => a.inject({ method: 'POST', url: '/api/execute', payload: { grammar: 'sql', text: slow } }).then((r) => {
        finished++;
        return r;
      }));
      await new Promise((r) => setTimeout(r, 20));
      const mask = await a.inject({ method: 'POST', url: '/api/mask', payload: { grammar: 'arith', prefix: '1 +', names: { Func: ['max'] } } });
      expect(mask.statusCode).toBe(200);
      // with one shared gate the mask request would have waited for all six
      expect(finished).toBeLessThan(6);
      for (const r of await Promise.all(queries)) {
        expect([200, 422]).toContain(r.statusCode);
        if (r.statusCode === 422) expect(r.json().error.message).toMatch(/time limit/);
      }
    } finally {
      await a.close();
    }
  });

  it('a decode whose program cannot get an executor slot still answers with its program', async () => {
    const registry = await Registry.open({ models: ['test/fixtures/tiny-seq2seq'], warm: false, threads: 1, grammars: ['sql'] });
    const a = await buildServer(registry, { execActive: 1, execQueued: 0 });
    try {
      // the one executor slot held by a run that ends only when the test says so (no timing)
      const sql = registry.grammar('sql')!;
      const real = sql.execute!;
      let release!: () => void;
      const held = new Promise<void>((r) => (release = r));
      let entered!: () => void;
      const running = new Promise<void>((r) => (entered = r));
      (sql as { execute: typeof real }).execute = async (tree, opts) => {
        entered();
        await held;
        return real(tree, opts);
      };
      const busy = a.inject({ method: 'POST', url: '/api/execute', payload: { grammar: 'sql', text: 'SELECT COUNT(*) FROM sheds' } });
      await running;
      const d = await a.inject({ method: 'POST', url: '/api/decode', payload: { question: 'how many sheds', grammar: 'sql', max_tokens: 40, execute: true } });
      expect(d.statusCode).toBe(200);
      const body = d.json() as { text: string; well_typed: boolean; answer: { ok: boolean; error?: string } };
      expect(typeof body.text).toBe('string');
      // constrained decoding of the fixture gives a well-typed program here, so its run was attempted
      expect(body.well_typed).toBe(true);
      expect(body.answer).toEqual({ ok: false, error: expect.stringMatching(/^not run: the server is busy/) });
      release();
      expect((await busy).statusCode).toBe(200);
    } finally {
      await a.close();
    }
  });
});
