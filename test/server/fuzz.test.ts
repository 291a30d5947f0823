// Property test: whatever JSON a client sends to a POST route, the answer is JSON of the documented
// shape with a 2xx/4xx status — never a 500 or a crash. Bodies come from fast-check: arbitrary JSON
// values, and objects with the route's own field names bound to arbitrary JSON values.
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import fc from 'fast-check';
import type { FastifyInstance } from 'fastify';
import { buildServer, Registry } from '../../src/server/index.ts';

vi.setConfig({ testTimeout: 180_000, hookTimeout: 120_000 });

let app: FastifyInstance;
beforeAll(async () => {
  app = await buildServer(await Registry.open({ models: ['test/fixtures/tiny-seq2seq'], threads: 1 }), { timeLimitMs: 5000 });
});
afterAll(async () => {
  await app?.close();
});

const GRAMMARS = ['sql', 'lf', 'arith', 'json'];
const texts = fc.oneof(
  fc.string({ maxLength: 40 }),
  fc.constantFrom('SELECT name FROM growers', 'SELECT COUNT(*) FROM sheds', 'lambda $x. orchard($x)', '1 + max(2', 'max(1, 2)', '{"a": [1, 2]}', 'value: 2 + 3'),
);
const trees = fc.constantFrom({ kind: 'num', value: 1 }, { kind: 'array', items: [] }, { kind: 'add' }, { kind: 'truth', formula: { kind: 'top' } }, { kind: 'null' });
const names = fc.constantFrom({ Func: ['max', 'min'] }, { Func: ['Max!'] }, { Entity: ['mara_feldwick'] });

/** Per route: each field's usually-valid values, and whether it is required. */
const FIELDS: Record<string, Record<string, [fc.Arbitrary<unknown>, boolean]>> = {
  '/api/check': { text: [texts, true], file: [fc.string({ maxLength: 12 }), false] },
  '/api/parse': { grammar: [fc.constantFrom(...GRAMMARS), true], text: [texts, true], names: [names, false] },
  '/api/print': { grammar: [fc.constantFrom(...GRAMMARS), true], tree: [trees, true] },
  '/api/mask': { grammar: [fc.constantFrom(...GRAMMARS), true], model: [fc.constant('tiny-seq2seq'), false], prefix: [texts, true], sample: [fc.integer({ min: 0, max: 30 }), false], names: [names, false] },
  '/api/execute': { grammar: [fc.constantFrom(...GRAMMARS), true], text: [texts, false], tree: [trees, false] },
  '/api/decode': {
    question: [fc.string({ minLength: 1, maxLength: 40 }), true],
    grammar: [fc.constantFrom(...GRAMMARS), true],
    model: [fc.constant('tiny-seq2seq'), false],
    constrained: [fc.boolean(), false],
    beam: [fc.integer({ min: 1, max: 3 }), false],
    sample: [fc.boolean(), false],
    temperature: [fc.double({ min: 0.1, max: 2, noNaN: true }), false],
    top_p: [fc.double({ min: 0.1, max: 1, noNaN: true }), false],
    seed: [fc.integer(), false],
    max_tokens: [fc.integer({ min: 1, max: 12 }), true],
    prefix: [fc.string({ maxLength: 6 }), false],
    names: [names, false],
    steps: [fc.boolean(), false],
    execute: [fc.boolean(), false],
  },
};

/** Mostly usable bodies (each field usually valid, sometimes any JSON), and sometimes any JSON at all. */
const body = (route: string) => {
  const fields = FIELDS[route];
  const record = fc.record(
    Object.fromEntries(Object.entries(fields).map(([f, [valid]]) => [f, fc.oneof({ arbitrary: valid, weight: 4 * Object.keys(fields).length }, { arbitrary: fc.jsonValue({ maxDepth: 2 }), weight: 3 })])),
    { requiredKeys: Object.entries(fields).filter(([, [, req]]) => req).map(([f]) => f) },
  );
  return fc.oneof({ arbitrary: record, weight: 5 }, { arbitrary: fc.jsonValue({ maxDepth: 3 }), weight: 1 });
};

describe('POST routes under arbitrary JSON bodies', () => {
  for (const route of Object.keys(FIELDS)) {
    it(`${route} answers JSON with a documented status`, async () => {
      await fc.assert(
        fc.asyncProperty(body(route), async (payload: unknown) => {
          if (route === '/api/decode' && payload !== null && typeof payload === 'object' && !Array.isArray(payload)) {
            // contradictory strategy options are refused (api.test.ts); here mostly decode something
            const p = payload as Record<string, unknown>;
            if (p.sample !== true) for (const k of ['temperature', 'top_p', 'seed']) delete p[k];
            else delete p.beam;
          }
          const res = await app.inject({ method: 'POST', url: route, headers: { 'content-type': 'application/json' }, payload: JSON.stringify(payload) });
          expect([200, 400, 404, 422], `${res.statusCode} ${res.body.slice(0, 300)}`).toContain(res.statusCode);
          const json = res.json();
          if (res.statusCode !== 200) {
            expect(typeof json.error.code).toBe('string');
            expect(typeof json.error.message).toBe('string');
            // a located message: the location (when given) is where the message starts
            if (json.error.location !== undefined && json.error.code !== 'grammar_model_mismatch') {
              expect(json.error.message.startsWith(json.error.location.replace(/:\d+:\d+$/, '')), json.error.message).toBe(true);
            }
          }
        }),
        { numRuns: route === '/api/decode' ? 60 : 150, seed: 20261202 },
      );
    });
  }
});
