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
