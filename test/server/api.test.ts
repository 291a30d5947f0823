// API tests for every route of the server, with fastify.inject against the fixture model (random
// weights, fast). Outside references are named beside each check.
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { Script } from 'node:vm';
import { Ajv2020 } from 'ajv/dist/2020.js';
import Database from 'better-sqlite3';
import type { FastifyInstance, LightMyRequestResponse } from 'fastify';
import { buildServer, Registry } from '../../src/server/index.ts';

vi.setConfig({ testTimeout: 120_000, hookTimeout: 120_000 });

const FIXTURE = 'test/fixtures/tiny-seq2seq';
let app: FastifyInstance;
let registry: Registry;
let openapi: { openapi: string; paths: Record<string, Record<string, { responses: Record<string, { content?: Record<string, { schema: unknown }> }> }>> };
// OpenAPI 3.1 schemas are JSON Schema draft 2020-12 (OpenAPI 3.1.0 §4.8.24): checked with ajv's 2020 class
const ajv = new Ajv2020({ strict: false, allErrors: true });
let docId = 0;

beforeAll(async () => {
  // the big description below compiles in ~2.6 s on an idle machine; a loaded shared machine can
  // take several times that, so this server's check limit is wider than the default 10 s
  registry = await Registry.open({ models: [FIXTURE], threads: 1, checkTimeoutMs: 60_000 });
  app = await buildServer(registry);
  openapi = (await app.inject({ method: 'GET', url: '/api/openapi.json' })).json();
  ajv.addSchema(openapi as object, 'openapi');
});

afterAll(async () => {
  await app?.close();
});

/** Asserts the response matches the schema the OpenAPI document gives for its route and status. */
function conforms(method: string, path: string, res: LightMyRequestResponse): void {
  const op = openapi.paths[path]?.[method];
  expect(op, `${method} ${path} in the OpenAPI document`).toBeDefined();
  const entry = op!.responses[String(res.statusCode)];
  expect(entry, `${method} ${path} documents status ${res.statusCode}`).toBeDefined();
  const pointer = `/paths/${path.replace(/~/g, '~0').replace(/\//g, '~1')}/${method}/responses/${res.statusCode}/content/application~1json/schema`;
  const validate = ajv.compile({ $id: `check-${docId++}`, $ref: `openapi#${pointer}` });
  const ok = validate(res.json());
  expect(validate.errors ?? [], `${method} ${path} ${res.statusCode}: ${res.body.slice(0, 200)}`).toEqual([]);
  expect(ok).toBe(true);
}

const post = async (url: string, payload: unknown, a: FastifyInstance = app) => {
  const res = await a.inject({ method: 'POST', url, payload: payload as object });
  expect(res.headers['content-type']).toMatch(/^application\/json/);
  if (a === app) conforms('post', url, res);
  return res;
};

describe('GET /api/openapi.json', () => {
  it('is an OpenAPI 3.1 document describing every /api/ route', async () => {
    expect(openapi.openapi).toBe('3.1.0');
    const routes = Object.entries(openapi.paths).flatMap(([p, ops]) => Object.keys(ops).map((m) => `${m.toUpperCase()} ${p}`)).sort();
    expect(routes).toEqual([
      'GET /api/grammars', 'GET /api/models', 'GET /api/openapi.json',
      'POST /api/check', 'POST /api/decode', 'POST /api/execute', 'POST /api/mask', 'POST /api/parse', 'POST /api/print',
    ]);
    // every POST route documents its JSON body and its error responses
    for (const [p, ops] of Object.entries(openapi.paths)) {
      const op = (ops as Record<string, { requestBody?: unknown; responses: Record<string, unknown> }>).post;
      if (!op) continue;
      expect(op.requestBody, p).toBeDefined();
      for (const status of ['200', '400', '413', '503']) expect(Object.keys(op.responses), p).toContain(status);
    }
    expect(Object.keys((openapi as unknown as { components: { schemas: object } }).components.schemas).sort()).toEqual(['Error', 'TreeViewNode']);
  });
});

describe('GET /api/grammars and /api/models', () => {
  it('lists the shipped grammars with their executors and bound name sets', async () => {
    const res = await app.inject({ method: 'GET', url: '/api/grammars' });
    conforms('get', '/api/grammars', res);
    const gs = res.json().grammars as { id: string; executor: boolean; name_sets: Record<string, number>; names_problem: string | null }[];
    expect(gs.map((g) => g.id)).toEqual(['sql', 'lf', 'arith', 'json']);
    expect(gs.map((g) => g.executor)).toEqual([true, true, false, false]);
    expect(gs.every((g) => g.names_problem === null)).toBe(true);
    // the demo database has 6 tables: count them with SQLite itself
    const db = new Database(registry.dbPath, { readonly: true });
    const tables = db.prepare("SELECT count(*) FROM sqlite_schema WHERE type = 'table' AND name NOT LIKE 'sqlite%'").pluck().get();
    db.close();
    expect(gs[0].name_sets.Table).toBe(tables);
  });

  it('lists the loaded model with its vocabulary size from config.json', async () => {
    const res = await app.inject({ method: 'GET', url: '/api/models' });
    conforms('get', '/api/models', res);
    const config = JSON.parse(readFileSync(`${FIXTURE}/config.json`, 'utf8'));
    expect(res.json().models).toMatchObject([{ id: 'tiny-seq2seq', vocab_size: config.vocab_size, max_positions: config.max_position_embeddings }]);
  });
});

describe('POST /api/check', () => {
  const arith = readFileSync('grammars/arith/arith.twg', 'utf8');
  const typo = arith.replace('"-" ~operand', '"-" ~operant');

  it('reports the README\'s typo example at 17:24 and 17:29', async () => {
    const res = await post('/api/check', { text: typo, file: 'arith-typo.twg' });
    expect(res.statusCode).toBe(200);
    const r = res.json();
    expect(r.ok).toBe(false);
    expect(r.id).toBeNull();
    expect(r.diagnostics.map((d: { line: number; column: number; message: string }) => `${d.line}:${d.column}: ${d.message}`)).toEqual([
      '17:24: layout of `neg` omits field `operand`',
      '17:29: layout of `neg` names `operant`, which is not one of its fields',
    ]);
  });

  it('gives a clean description an id from its SHA-256 and caches by content', async () => {
    const before = registry.checkedCount;
    const a = (await post('/api/check', { text: arith, file: 'mine.twg' })).json();
    // SHA-256 (FIPS 180-4) of the text, computed by node:crypto
    const hash = createHash('sha256').update(arith, 'utf8').digest('hex');
    expect(a).toMatchObject({ ok: true, hash, id: `h-${hash.slice(0, 16)}`, diagnostics: [] });
    const b = (await post('/api/check', { text: arith, file: 'mine.twg' })).json();
    expect(b).toEqual(a);
    expect(registry.checkedCount).toBe(before + 1);
    // the id works in other routes and is listed
    const parsed = (await post('/api/parse', { grammar: a.id, text: '1 + 2' })).json();
    expect(parsed.tree).toMatchObject({ kind: 'add' });
    const list = (await app.inject({ method: 'GET', url: '/api/grammars' })).json().grammars;
    expect(list.find((g: { id: string }) => g.id === a.id)).toMatchObject({ origin: 'checked', name: 'arith' });
  });

  it('refuses a description over 64 KiB by JSON path', async () => {
    const res = await post('/api/check', { text: '#'.repeat(65537) });
    expect(res.statusCode).toBe(400);
    expect(res.json().error.message).toBe(`$.text: found "${'#'.repeat(40)}"… (65537 characters); expected a string of at most 65536 characters`);
  });

  it('compiles off the main thread, within a time limit', async () => {
    // a synthetic 64 KB description: a chain of 960-odd sorts (about 2.6 s to compile here)
    let big = 'grammar big\nstart S0\nspace " "\ntoken N = /[0-9]{1,9}/ as int\n';
    let i = 0;
    for (; big.length < 64000; i++) big += `sort S${i} { c${i}a(x: N) = "k${i}" x; c${i}b(y: S${i + 1}?) = "q${i}" [y]; }\n`;
    big += `sort S${i} { c${i}z(x: N) = "z" x; }\n`;
    // the main thread keeps turning while it compiles: a 1 ms interval fires many times (a compile
    // on the main thread would hold it for the whole compile and let it fire only before and after)
    let ticks = 0;
    let answered = 0;
    const timer = setInterval(() => {
      ticks++;
      void app.inject({ method: 'GET', url: '/api/models' }).then((r) => r.statusCode === 200 && answered++);
    }, 1);
    const res = await app.inject({ method: 'POST', url: '/api/check', payload: { text: big, file: 'big.twg' } });
    clearInterval(timer);
    expect(res.json()).toMatchObject({ ok: true, diagnostics: [] });
    expect(ticks).toBeGreaterThan(20);
    expect(answered).toBeGreaterThan(20);

    const strict = await buildServer(await Registry.open({ models: [], grammars: ['arith'], checkTimeoutMs: 400 }));
    try {
      const res = await strict.inject({ method: 'POST', url: '/api/check', payload: { text: big + '# again\n', file: 'big.twg' } });
      expect(res.statusCode).toBe(504);
      expect(res.json().error).toEqual({ code: 'time_limit', message: '$.text: compiling big.twg took longer than 400 ms and was stopped; expected a smaller description', location: '$.text' });
      // a fresh worker takes the next check
      const small = await strict.inject({ method: 'POST', url: '/api/check', payload: { text: 'grammar g\nstart E\nspace " "\nsort E { one() = "1"; }\n' } });
      expect(small.json()).toMatchObject({ ok: true });
    } finally {
      await strict.close();
    }
  });

  it('names a missing field by JSON path', async () => {
    const res = await post('/api/check', { file: 'x.twg' });
    expect(res.statusCode).toBe(400);
    expect(res.json()).toEqual({ error: { code: 'invalid_request', message: '$.text: missing; expected a value for the required field', location: '$.text' } });
  });
});

describe('POST /api/parse and /api/print', () => {
  it('round-trips JSON text; the printed text means the same to JSON.parse (RFC 8259, V8)', async () => {
    const text = '{"fruit": ["elstar", "conference"], "kg": [12.5, -3e2], "ok": true, "none": null, "esc": "a\\u00e9\\n"}';
    const tree = (await post('/api/parse', { grammar: 'json', text })).json().tree;
    expect(tree.kind).toBe('object');
    const printed = (await post('/api/print', { grammar: 'json', tree })).json().text;
    expect(JSON.parse(printed)).toEqual(JSON.parse(text));
  });

  it('a parse error is 422 with file:line:col', async () => {
    const res = await post('/api/parse', { grammar: 'json', text: '[1,\n 2' });
    expect(res.statusCode).toBe(422);
    expect(res.json().error).toMatchObject({ code: 'parse_error', location: '<input>:2:3', line: 2, column: 3 });
    expect(res.json().error.message).toBe('<input>:2:3: expected "," or "]"\n2 |  2\n  |   ^');
    // arith's space is " \t": a line break is itself the error
    const nl = await post('/api/parse', { grammar: 'arith', text: 'max(1,\n 2)' });
    expect(nl.json().error.location).toBe('<input>:1:7');
  });

  it('unknown names are located errors; the request may bind its own', async () => {
    const bad = await post('/api/parse', { grammar: 'arith', text: 'foo(1)' });
    expect(bad.statusCode).toBe(422);
    expect(bad.json().error.location).toBe('<input>:1:1');
    const good = await post('/api/parse', { grammar: 'arith', text: 'foo(1)', names: { Func: ['foo'] } });
    expect(good.json().tree).toMatchObject({ kind: 'call', fn: 'foo' });
    const wrong = await post('/api/parse', { grammar: 'arith', text: '1', names: { Nope: ['x'] } });
    expect(wrong.statusCode).toBe(400);
    expect(wrong.json().error).toMatchObject({ location: '$.names.Nope', message: '$.names.Nope: arith has no name set Nope (name sets: Func)' });
  });

  it('an invalid tree is 422 with the JSON path into the request', async () => {
    const res = await post('/api/print', { grammar: 'arith', tree: { kind: 'add', left: { kind: 'num', value: 1 }, right: { kind: 'num', value: 'two' } } });
    expect(res.statusCode).toBe(422);
    expect(res.json().error).toMatchObject({ code: 'invalid_tree', location: '$.tree.right.value' });
    expect(res.json().error.message).toMatch(/^\$\.tree\.right\.value: /);
  });

  it('an unknown grammar is 404 naming the known ones', async () => {
    const res = await post('/api/parse', { grammar: 'cobol', text: 'x' });
    expect(res.statusCode).toBe(404);
    expect(res.json().error.message).toMatch(/^\$\.grammar: no grammar "cobol"; expected one of "sql", "lf", "arith", "json"/);
  });
});

describe('POST /api/mask', () => {
  it('"complete" agrees with JSON.parse (V8, RFC 8259) on prefixes of the json grammar', async () => {
    const cases = ['{"a": 1}', '{"a": 1', '[1, 2]', '[1,]', '"x', '0', '01', '-', 'tru', 'true', '{"a" 1}', ' [ ] ', '[1e5]'];
    for (const prefix of cases) {
      const r = (await post('/api/mask', { grammar: 'json', prefix })).json();
      let parses = true;
      try {
        JSON.parse(prefix);
      } catch {
        parses = false;
      }
      expect(r.complete, prefix).toBe(parses);
      if (parses) expect(r.viable, prefix).toBe(true);
    }
    // these cannot be continued into JSON at all
    for (const dead of ['[1,]', '01', '{"a" 1}']) expect((await post('/api/mask', { grammar: 'json', prefix: dead })).json().viable, dead).toBe(false);
  });

  it('counts and lists the allowed tokens; each extends the prefix to a viable one', async () => {
    const r = (await post('/api/mask', { grammar: 'arith', prefix: 'max(1, 2', sample: 500 })).json();
    expect(r).toMatchObject({ viable: true, complete: false, vocab_size: 287, tokens_to_complete: 2 });
    expect(r.allowed.length).toBe(r.allowed_count);
    expect(r.allowed.map((t: { text: string }) => t.text)).toContain(')');
    for (const t of r.allowed.slice(0, 20)) {
      const next = (await post('/api/mask', { grammar: 'arith', prefix: 'max(1, 2' + t.text, sample: 0 })).json();
      expect(next.viable, t.text).toBe(true);
    }
    const none = (await post('/api/mask', { grammar: 'arith', prefix: 'max(1, 2))' })).json();
    expect(none).toMatchObject({ viable: false, allowed_count: 0, allowed: [] });
  });
});

describe('POST /api/execute', () => {
  it('runs SQL read-only and answers what SQLite (better-sqlite3) answers', async () => {
    const text = "SELECT name, joined_year FROM growers WHERE village = 'Oakmere' ORDER BY name";
    const r = (await post('/api/execute', { grammar: 'sql', text })).json();
    const db = new Database(registry.dbPath, { readonly: true });
    const rows = db.prepare(text).raw().all();
    db.close();
    expect(r.value).toEqual({ columns: ['name', 'joined_year'], rows });
    expect(rows.length).toBeGreaterThan(0);
  });

  it('runs LF over the fact base; the same question in SQL gives the same growers', async () => {
    const r = (await post('/api/execute', { grammar: 'lf', text: 'lambda $x. grower($x) & lives_in($x, oakmere)' })).json();
    expect(r.value.type).toBe('set');
    // the lexicon's constant convention: lower case, spaces to underscores (src/exec/lexicon.ts)
    const db = new Database(registry.dbPath, { readonly: true });
    const names = (db.prepare("SELECT name FROM growers WHERE village = 'Oakmere'").pluck().all() as string[]).map((n) => n.toLowerCase().replace(/ /g, '_'));
    db.close();
    expect([...r.value.members].sort()).toEqual(names.sort());
  });

  it('takes a tree as well as text, and refuses both or neither', async () => {
    const tree = (await post('/api/parse', { grammar: 'sql', text: 'SELECT COUNT(*) FROM sheds' })).json().tree;
    const r = (await post('/api/execute', { grammar: 'sql', tree })).json();
    expect(r.text).toBe('SELECT COUNT(*) FROM sheds');
    const both = await post('/api/execute', { grammar: 'sql', tree, text: 'SELECT 1' });
    expect(both.statusCode).toBe(400);
    expect(both.json().error.message).toBe('$: found both "text" and "tree"; expected exactly one of them');
  });

  it('statements other than SELECT do not parse; grammars without an executor are 422', async () => {
    const del = await post('/api/execute', { grammar: 'sql', text: 'DELETE FROM growers' });
    expect(del.statusCode).toBe(422);
    expect(del.json().error.location).toBe('<input>:1:1');
    const json = await post('/api/execute', { grammar: 'json', text: '[1]' });
    expect(json.statusCode).toBe(422);
    expect(json.json().error.code).toBe('no_executor');
  });

  it('an SQLite error is 422 with SQLite\'s own message', async () => {
    const db = new Database(registry.dbPath, { readonly: true });
    let sqliteMessage = '';
    try {
      db.prepare('SELECT nope FROM growers');
    } catch (e) {
      sqliteMessage = (e as Error).message;
    }
    db.close();
    const res = await post('/api/execute', { grammar: 'sql', text: 'SELECT nope FROM growers' });
    // nope is not a column of the demo database: with names bound it does not even parse
    expect(res.statusCode).toBe(422);
    expect(sqliteMessage).toBe('no such column: nope');
    expect(res.json().error.message).toContain("unknown name 'nope'");
  });
});

describe('POST /api/decode', () => {
  const q = 'which orchards above 300 m grow elstar?';

  it('constrained: a well-typed program, every step allowed, steps rebuild the text', async () => {
    const r = (await post('/api/decode', { question: q, grammar: 'lf', steps: true, execute: true, max_tokens: 48 })).json();
    expect(r).not.toHaveProperty('parses'); // one name per measure: metrics.json's `valid`
    expect(r).toMatchObject({ question: `to lf: ${q}`, valid: true, well_typed: true, constrained: true, strategy: 'greedy', model: 'tiny-seq2seq', left_grammar_at: null, over_budget_at: null });
    expect(r.steps.every((s: { viable: boolean }) => s.viable === true)).toBe(true);
    expect(r.steps.length).toBe(r.tokens.length);
    expect(r.steps.every((s: { allowed: boolean; allowed_count: number }) => s.allowed === true && s.allowed_count >= 1)).toBe(true);
    expect(r.steps.at(-1).text).toBe(r.text);
    expect(r.tree_view.label).toBe(r.tree.kind);
    expect(r.tree_view.end).toBe(r.text.replace(/\s+/g, '').length);
    expect(r.answer.ok).toBe(true);
    // the first step's count is the mask at the empty prefix
    const m = (await post('/api/mask', { grammar: 'lf', prefix: '' })).json();
    expect(r.steps[0].allowed_count).toBe(m.allowed_count);
  });

  it('unconstrained: the step where the automaton says the text left the grammar holds the parser\'s first bad character', async () => {
    const r = (await post('/api/decode', { question: q, grammar: 'lf', constrained: false, steps: true, max_tokens: 24 })).json();
    expect(r.valid).toBe(false);
    expect(r.answer).toBeNull();
    // two implementations agree: the ohm parser's error offset and the automaton's first refused token
    const m = /^<output>:1:(\d+): /.exec(r.parse_error);
    expect(m).not.toBeNull();
    const offset = Number(m![1]) - 1;
    const holding = r.steps.findIndex((s: { text: string }) => s.text.length > offset);
    expect(r.left_grammar_at).toBe(holding);
    expect(r.steps.slice(holding + 1).every((s: { allowed_count: number | null }) => s.allowed_count === null)).toBe(true);
  });

  it('beam search and seeded sampling; the same seed gives the same output', async () => {
    const beam = (await post('/api/decode', { question: q, grammar: 'sql', beam: 3, max_tokens: 40 })).json();
    expect(beam).toMatchObject({ strategy: 'beam', well_typed: true });
    const s1 = (await post('/api/decode', { question: q, grammar: 'arith', sample: true, seed: 7, temperature: 1.3, max_tokens: 30 })).json();
    const s2 = (await post('/api/decode', { question: q, grammar: 'arith', sample: true, seed: 7, temperature: 1.3, max_tokens: 30 })).json();
    expect(s1.strategy).toBe('sample');
    expect(s1.well_typed).toBe(true);
    expect(s2.text).toBe(s1.text);
  });

  it('refuses contradictory or out-of-range options by JSON path', async () => {
    const cases: [object, string, number][] = [
      [{ question: q, grammar: 'lf', beam: 2, sample: true }, '$.sample', 400],
      [{ question: q, grammar: 'lf', temperature: 0.5 }, '$.temperature', 400],
      [{ question: q, grammar: 'lf', max_tokens: 500 }, '$.max_tokens', 400],
      [{ question: q, grammar: 'lf', beam: 0 }, '$.beam', 400],
      [{ question: q, grammar: 'lf', colour: 'red' }, '$.colour', 400],
      [{ question: 7, grammar: 'lf' }, '$.question', 400],
      [{ question: q, grammar: 'lf', model: 'big' }, '$.model', 404],
    ];
    for (const [body, location, status] of cases) {
      const res = await post('/api/decode', body);
      expect(res.statusCode, JSON.stringify(body)).toBe(status);
      expect(res.json().error.location, JSON.stringify(body)).toBe(location);
      expect(res.json().error.message.startsWith(`${location}: `)).toBe(true);
    }
    expect((await post('/api/decode', { question: q, grammar: 'lf', max_tokens: 500 })).json().error.message).toBe('$.max_tokens: found 500; expected at most 127 for model tiny-seq2seq');
    // a question longer than the encoder's positions (config.json: max_position_embeddings)
    const config = JSON.parse(readFileSync(`${FIXTURE}/config.json`, 'utf8'));
    const long = await post('/api/decode', { question: 'pears '.repeat(config.max_position_embeddings), grammar: 'lf' });
    expect(long.statusCode).toBe(400);
    expect(long.json().error.message).toMatch(new RegExp(`^\\$\\.question: found \\d+ tokens \\(with the prefix "to lf: "\\); expected at most ${config.max_position_embeddings} tokens for model tiny-seq2seq$`));
  });
});

describe('limits and malformed requests', () => {
  it('malformed JSON is 400 with the line and column of the first problem', async () => {
    const res = await app.inject({ method: 'POST', url: '/api/parse', headers: { 'content-type': 'application/json' }, payload: '{"grammar": "lf",\n  "text": lambda}' });
    expect(res.statusCode).toBe(400);
    // RFC 8259 §3: a value is an object, array, number, string or one of three literal names; `lambda` is none
    expect(res.json()).toEqual({ error: { code: 'malformed_json', message: 'request body:2:11: found `lambda`; expected a JSON value (at offset 28)', location: 'request body:2:11', line: 2, column: 11 } });
    const cut = await app.inject({ method: 'POST', url: '/api/parse', headers: { 'content-type': 'application/json' }, payload: '{"grammar": "lf", "text": "x"' });
    expect(cut.statusCode).toBe(400);
    expect(cut.json().error.message).toBe("request body:1:30: expected ',' or '}' (at offset 29)");
  });

  it('other content types are 415, unknown routes 404, both JSON', async () => {
    const res = await app.inject({ method: 'POST', url: '/api/parse', headers: { 'content-type': 'text/plain' }, payload: 'hello' });
    expect(res.statusCode).toBe(415);
    expect(res.json().error.code).toBe('unsupported_media_type');
    const nf = await app.inject({ method: 'GET', url: '/api/nothing' });
    expect(nf.statusCode).toBe(404);
    expect(nf.json().error.message).toBe('GET /api/nothing: no such route; expected one of the routes in GET /api/openapi.json');
  });

  it('an oversized body is 413 JSON; a concurrency overflow is 503; a slow request is 504', async () => {
    const small = await buildServer(await Registry.open({ models: [FIXTURE], threads: 1, grammars: ['lf'] }), { bodyLimit: 1000, maxActive: 1, maxQueued: 0, timeLimitMs: 60_000 });
    try {
      const big = await small.inject({ method: 'POST', url: '/api/parse', payload: { grammar: 'lf', text: 'x'.repeat(2000) } });
      // RFC 9110 §15.5.14: 413 Content Too Large
      expect(big.statusCode).toBe(413);
      expect(big.json()).toEqual({ error: { code: 'body_too_large', message: 'request body is larger than 1000 bytes; expected at most 1000', location: '$' } });
      const body = { question: 'how many lots?', grammar: 'lf', max_tokens: 40 };
      const all = await Promise.all([1, 2, 3].map(() => small.inject({ method: 'POST', url: '/api/decode', payload: body })));
      expect(all.map((r) => r.statusCode).sort()).toEqual([200, 503, 503]);
      expect(small.treewrightStats.refused).toBe(2);
      const refused = all.find((r) => r.statusCode === 503)!;
      expect(refused.json().error.code).toBe('overloaded');
      // RFC 9110 §10.2.3: Retry-After tells the client when to try again
      expect(refused.headers['retry-after']).toBe('1');
      // the gate is free again afterwards
      expect((await small.inject({ method: 'POST', url: '/api/decode', payload: body })).statusCode).toBe(200);
    } finally {
      await small.close();
    }
    const slow = await buildServer(await Registry.open({ models: [FIXTURE], threads: 1, grammars: ['lf'] }), { timeLimitMs: 1 });
    try {
      const res = await slow.inject({ method: 'POST', url: '/api/decode', payload: { question: 'how many lots?', grammar: 'lf', constrained: false, max_tokens: 100 } });
      expect(res.statusCode).toBe(504);
      expect(res.json().error).toEqual({ code: 'time_limit', message: 'the request ran longer than its time limit of 1 ms and was stopped' });
    } finally {
      await slow.close();
    }
  });
});

describe('a client that goes away', () => {
  it('stops its decoding and frees the slot (real server on 127.0.0.1)', async () => {
    const one = await buildServer(await Registry.open({ models: [FIXTURE], threads: 1, grammars: ['lf'] }), { maxActive: 1, maxQueued: 0 });
    try {
      await one.listen({ host: '127.0.0.1', port: 0 });
      const url = `http://127.0.0.1:${(one.server.address() as { port: number }).port}/api/decode`;
      const long = { question: 'how many lots?', grammar: 'lf', constrained: false, max_tokens: 127 };
      const ctrl = new AbortController();
      const gone = fetch(url, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(long), signal: ctrl.signal }).catch((e: Error) => e.name);
      const stats = one.treewrightStats;
      while (stats.active === 0) await new Promise((r) => setTimeout(r, 2));
      ctrl.abort();
      expect(await gone).toBe('AbortError');
      while (stats.active !== 0) await new Promise((r) => setTimeout(r, 5));
      // the decode ended by noticing the closed connection, not by running to its end
      expect(stats).toMatchObject({ decoded: 1, stoppedGone: 1, stoppedTime: 0 });
      const next = await fetch(url, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ ...long, max_tokens: 1 }) });
      expect(next.status).toBe(200);
    } finally {
      await one.close();
    }
  });
});

describe('a server without models', () => {
  it('answers model routes with 404 naming the flag that loads one', async () => {
    const bare = await buildServer(await Registry.open({ models: [], grammars: ['arith'] }));
    try {
      const res = await bare.inject({ method: 'POST', url: '/api/mask', payload: { grammar: 'arith', prefix: '1 +' } });
      expect(res.statusCode).toBe(404);
      expect(res.json().error).toEqual({ code: 'unknown_model', message: '$.model: no model is loaded; expected the server to be started with --model DIR', location: '$.model' });
      // routes that need no model still work
      expect((await bare.inject({ method: 'POST', url: '/api/parse', payload: { grammar: 'arith', text: '1 + 2' } })).statusCode).toBe(200);
    } finally {
      await bare.close();
    }
  });
});

describe('the page', () => {
  it('serves HTML, CSS and a script V8 compiles', async () => {
    const html = await app.inject({ method: 'GET', url: '/' });
    expect(html.headers['content-type']).toBe('text/html; charset=utf-8');
    expect(html.body).toContain('<script src="/app.js"></script>');
    expect(html.headers['content-security-policy']).toContain("connect-src 'self'");
    const js = await app.inject({ method: 'GET', url: '/app.js' });
    expect(js.headers['content-type']).toBe('text/javascript; charset=utf-8');
    expect(() => new Script(js.body, { filename: 'app.js' })).not.toThrow();
    expect((await app.inject({ method: 'GET', url: '/style.css' })).headers['content-type']).toBe('text/css; charset=utf-8');
  });
});
