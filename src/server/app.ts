/**
 * The HTTP server: fastify routes over a Registry (grammars, models, names, executors).
 * See index.ts for the overview and limits.
 */
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Fastify, { type FastifyInstance, type FastifyRequest } from 'fastify';
import swagger from '@fastify/swagger';
import { boundConstraint, generate, maskEngine, textOf } from '../decode/index.ts';
import type { NameBindings } from '../description/ir.ts';
import type { Tree } from '../exec/types.ts';
import { MaskError } from '../masks/index.ts';
import { ModelError, type Seq2SeqModel } from '../model/index.ts';
import { checkNames, createParser, NamesError, ParseError, printTree, TreeError } from '../tree/index.ts';
import { ApiError, badField, bodyTooLarge, notFound, overloaded, parseJsonBody, timeLimit } from './errors.ts';
import { CheckTimeout } from './checker.ts';
import { Gate } from './gate.ts';
import type { GrammarEntry, ModelEntry, Registry } from './registry.ts';
import * as S from './schemas.ts';
import { replaySteps, treeView } from './steps.ts';

export interface ServerLimits {
  /** largest request body in bytes (default 1 MiB) */
  readonly bodyLimit?: number;
  /** wall-clock limit of one decode request in ms (default 30 000) */
  readonly timeLimitMs?: number;
  /** model/executor requests running at once (default 2) */
  readonly maxActive?: number;
  /** requests waiting for a slot before the server answers 503 (default 64) */
  readonly maxQueued?: number;
}

const PAGE_DIR = join(dirname(fileURLToPath(import.meta.url)), 'page');
const PAGE_FILES: Record<string, string> = {
  '/': 'index.html',
  '/app.js': 'app.js',
  '/style.css': 'style.css',
};
const TYPES: Record<string, string> = { html: 'text/html; charset=utf-8', js: 'text/javascript; charset=utf-8', css: 'text/css; charset=utf-8' };

class Stopped extends Error {}

/** Counters a server keeps (`app.treewrightStats`): for operators and tests. */
export interface ServerStats {
  /** decode requests answered (any status) */
  decoded: number;
  /** decodes stopped because the client closed the connection */
  stoppedGone: number;
  /** decodes stopped at the time limit */
  stoppedTime: number;
  /** requests refused with 503 */
  refused: number;
  /** requests holding a slot right now */
  readonly active: number;
}

declare module 'fastify' {
  interface FastifyInstance {
    treewrightStats: ServerStats;
  }
}

/** A view of `model` whose decoding runs throw Stopped once `stop()` says so (checked every step). */
function stoppable(model: Seq2SeqModel, stop: () => boolean): Seq2SeqModel {
  const view = Object.create(model) as Seq2SeqModel;
  view.start = async (q) => {
    if (stop()) throw new Stopped();
    const run = await model.start(q);
    const runView = Object.create(run) as typeof run;
    runView.step = (tokens, parents) => {
      if (stop()) return Promise.reject(new Stopped());
      return run.step(tokens, parents);
    };
    return runView;
  };
  return view;
}

/** `/tree/left` → `$.tree.left`, `/names/Table/0` → `$.names.Table[0]` */
function jsonPath(pointer: string): string {
  let out = '$';
  for (const raw of pointer.split('/').slice(1)) {
    const key = raw.replace(/~1/g, '/').replace(/~0/g, '~');
    out += /^\d+$/.test(key) ? `[${key}]` : /^[A-Za-z_$][\w$]*$/.test(key) ? `.${key}` : `[${JSON.stringify(key)}]`;
  }
  return out;
}

function at(value: unknown, pointer: string): unknown {
  let v = value;
  for (const raw of pointer.split('/').slice(1)) {
    if (v === null || typeof v !== 'object') return undefined;
    v = (v as Record<string, unknown>)[raw.replace(/~1/g, '/').replace(/~0/g, '~')];
  }
  return v;
}

const show = (v: unknown) => {
  if (typeof v === 'string' && v.length > 40) return `${JSON.stringify(v.slice(0, 40))}… (${v.length} characters)`;
  const s = JSON.stringify(v);
  return s === undefined ? 'nothing' : s.length > 60 ? `${s.slice(0, 57)}…` : s;
};

interface AjvIssue {
  instancePath: string;
  keyword: string;
  message?: string;
  params: Record<string, unknown>;
}

function validationError(issue: AjvIssue, body: unknown): ApiError {
  if (issue.keyword === 'required') {
    const path = jsonPath(`${issue.instancePath}/${String(issue.params.missingProperty)}`);
    return new ApiError(400, 'invalid_request', `${path}: missing; expected a value for the required field`, path);
  }
  if (issue.keyword === 'additionalProperties') {
    const path = jsonPath(`${issue.instancePath}/${String(issue.params.additionalProperty)}`);
    return new ApiError(400, 'invalid_request', `${path}: unknown field; expected only the fields the API describes (GET /api/openapi.json)`, path);
  }
  const path = jsonPath(issue.instancePath);
  const p = issue.params;
  const article = (t: string) => (/^[aeiou]/.test(t) ? `an ${t}` : `a ${t}`);
  const expected =
    issue.keyword === 'type' ? String(p.type).split(',').map(article).join(' or ')
    : issue.keyword === 'maxLength' ? `a string of at most ${p.limit} characters`
    : issue.keyword === 'minLength' ? `a string of at least ${p.limit} character${p.limit === 1 ? '' : 's'}`
    : issue.keyword === 'maxItems' ? `at most ${p.limit} items`
    : issue.keyword === 'maximum' || issue.keyword === 'minimum' || issue.keyword === 'exclusiveMaximum' || issue.keyword === 'exclusiveMinimum' ? `a number ${p.comparison} ${p.limit}`
    : issue.keyword === 'enum' ? `one of ${(p.allowedValues as unknown[]).map((v) => JSON.stringify(v)).join(', ')}`
    : (issue.message ?? 'a valid value').replace(/^must (be )?/, '');
  return new ApiError(400, 'invalid_request', `${path}: found ${show(at(body, issue.instancePath))}; expected ${expected}`, path);
}

/** Builds the server (not yet listening). Closing the app closes the registry. */
export async function buildServer(registry: Registry, limits: ServerLimits = {}): Promise<FastifyInstance> {
  const bodyLimit = limits.bodyLimit ?? 1024 * 1024;
  const timeLimitMs = limits.timeLimitMs ?? 30_000;
  const gate = new Gate(limits.maxActive ?? 2, limits.maxQueued ?? 64);
  const app = Fastify({
    bodyLimit,
    requestTimeout: 120_000,
    logger: false,
    ajv: { customOptions: { coerceTypes: false, removeAdditional: false, useDefaults: true, allErrors: false } },
  });
  const stats: ServerStats = {
    decoded: 0,
    stoppedGone: 0,
    stoppedTime: 0,
    refused: 0,
    get active() {
      return gate.running;
    },
  };
  app.decorate('treewrightStats', stats);
  const page = Object.fromEntries(Object.entries(PAGE_FILES).map(([url, f]) => [url, { body: readFileSync(join(PAGE_DIR, f)), type: TYPES[f.split('.').pop()!] }]));

  // JSON only: other content types (text/plain included) are 415
  app.removeAllContentTypeParsers();
  app.addContentTypeParser('application/json', { parseAs: 'string', bodyLimit }, (_req, body, done) => {
    try {
      done(null, parseJsonBody(body as string));
    } catch (e) {
      done(e as Error, undefined);
    }
  });
  // responses are plain JSON.stringify: the response schemas document, they do not filter
  app.setSerializerCompiler(() => (data) => JSON.stringify(data));
  for (const s of S.sharedSchemas) app.addSchema(s);

  app.setErrorHandler((err, req, reply) => {
    let e: ApiError;
    const fe = err as { code?: string; statusCode?: number; validation?: AjvIssue[]; message: string };
    if (err instanceof ApiError) e = err;
    else if (fe.validation && fe.validation.length > 0) e = validationError(fe.validation[0], req.body);
    else if (fe.code === 'FST_ERR_CTP_BODY_TOO_LARGE') e = bodyTooLarge(bodyLimit);
    else if (fe.code === 'FST_ERR_CTP_INVALID_MEDIA_TYPE') e = new ApiError(415, 'unsupported_media_type', `request body: content type ${show(req.headers['content-type'] ?? '')}; expected application/json`, '$');
    else if (fe.code === 'FST_ERR_CTP_EMPTY_JSON_BODY') e = new ApiError(400, 'malformed_json', 'request body:1:1: empty; expected a JSON object', 'request body:1:1', { line: 1, column: 1 });
    else if (typeof fe.statusCode === 'number' && fe.statusCode >= 400 && fe.statusCode < 500) e = new ApiError(fe.statusCode, (fe.code ?? 'bad_request').toLowerCase(), fe.message);
    else {
      req.log.error(err);
      e = new ApiError(500, 'internal', `internal error: ${fe.message}`);
    }
    if (e.status === 503) reply.header('retry-after', '1');
    reply.status(e.status).type('application/json').send(e.toJSON());
  });
  app.setNotFoundHandler((req, reply) => {
    reply.status(404).send(new ApiError(404, 'not_found', `${req.method} ${req.url}: no such route; expected one of the routes in GET /api/openapi.json`).toJSON());
  });

  await app.register(swagger, {
    // shared schemas keep their $id as their component name (Error, TreeViewNode)
    refResolver: { buildLocalReference: (json, _base, _fragment, i) => (typeof json.$id === 'string' ? json.$id : `def-${i}`) },
    openapi: {
      openapi: '3.1.0',
      info: { title: 'treewright server', version: '0.1.0', description: 'Grammar checks, constrained generation, parsing, printing, token masks and execution over HTTP. Every error is JSON {error: {code, message, location?}}.' },
    },
  });

  const grammarOf = (id: string): GrammarEntry => {
    const g = registry.grammar(id);
    if (!g) throw notFound('$.grammar', 'grammar', id, registry.grammarIds());
    return g;
  };
  const modelOf = (id: string | undefined): ModelEntry => {
    const ids = [...registry.models.keys()];
    const m = id === undefined ? registry.models.get(ids[0]) : registry.models.get(id);
    if (!m) throw notFound('$.model', 'model', id ?? '(default)', ids);
    return m;
  };
  const namesOf = (g: GrammarEntry, override: NameBindings | undefined): NameBindings => {
    if (override !== undefined) {
      const merged = { ...(g.names ?? {}), ...override };
      try {
        checkNames(g.grammar, override, 'request');
      } catch (e) {
        const m = /^request: (\$[^:]*): (.*)$/s.exec((e as Error).message);
        const path = m ? `$.names${m[1].slice(1)}` : '$.names';
        throw new ApiError(400, 'invalid_names', `${path}: ${m ? m[2] : (e as Error).message}`, path);
      }
      const missing = g.grammar.nameSets.filter((n) => !(n.name in merged)).map((n) => n.name);
      if (missing.length > 0) throw new ApiError(400, 'unbound_names', `$.names: no bindings for ${missing.join(', ')}; expected {"${missing[0]}": [...]}`, '$.names');
      return merged;
    }
    if (g.names === null) throw new ApiError(400, 'unbound_names', `$.names: ${g.namesProblem}`, '$.names');
    return g.names;
  };
  const parseError = (e: unknown): never => {
    if (e instanceof ParseError) throw new ApiError(422, 'parse_error', e.message, `${e.file}:${e.line}:${e.column}`, { line: e.line, column: e.column });
    throw e;
  };
  const treeError = (e: unknown, base: string): never => {
    if (e instanceof TreeError) {
      const path = base + e.issue.path.slice(1);
      throw new ApiError(422, 'invalid_tree', `${path}: ${e.issue.message}`, path);
    }
    throw e;
  };
  const modelError = (e: unknown): never => {
    if (e instanceof ModelError || e instanceof MaskError || e instanceof NamesError) throw new ApiError(422, 'grammar_model_mismatch', (e as Error).message, (e as ModelError).file);
    if (e instanceof RangeError) throw new ApiError(400, 'invalid_request', e.message);
    throw e;
  };
  const withSlot = async <T>(work: () => Promise<T>): Promise<T> => {
    const release = await gate.enter();
    if (release === null) {
      stats.refused++;
      throw overloaded(gate.running, gate.queued);
    }
    try {
      return await work();
    } finally {
      release();
    }
  };
  // the client went away (socket closed): stop decoding for nobody
  const gone = (req: FastifyRequest) => req.raw.socket?.destroyed === true;

  app.get('/api/openapi.json', { schema: { summary: 'This API as an OpenAPI 3.1 document' } }, async () => app.swagger());

  app.get('/api/grammars', { schema: S.grammarsSchema }, async () => ({
    grammars: registry.grammarIds().map((id) => {
      const e = registry.grammar(id)!;
      const g = e.grammar;
      return {
        id,
        name: g.name,
        file: e.file,
        origin: e.origin,
        start: g.start,
        hash: g.hash,
        sorts: g.sorts.map((s) => s.name),
        constructors: g.constructors.map((c) => c.name),
        name_sets: Object.fromEntries(g.nameSets.map((n) => [n.name, e.names?.[n.name]?.length ?? 0])),
        names_problem: e.namesProblem,
        executor: e.execute !== null,
        text: e.text,
      };
    }),
  }));

  app.get('/api/models', { schema: S.modelsSchema }, async () => ({
    models: [...registry.models.values()].map((m) => ({ id: m.id, dir: m.dir, vocab_size: m.model.vocabSize, max_positions: m.model.config.maxPositions, cached: m.model.cached })),
  }));

  app.post('/api/check', { schema: S.checkSchema }, async (req) => {
    const body = req.body as { text: string; file: string };
    try {
      return await withSlot(() => registry.check(body.text, body.file));
    } catch (e) {
      if (e instanceof CheckTimeout) throw new ApiError(504, 'time_limit', `$.text: ${e.message} and was stopped; expected a smaller description`, '$.text');
      throw e;
    }
  });

  app.post('/api/parse', { schema: S.parseSchema }, async (req) => {
    const body = req.body as { grammar: string; text: string; names?: NameBindings };
    const g = grammarOf(body.grammar);
    const names = namesOf(g, body.names);
    try {
      return { tree: createParser(g.grammar).parse(body.text, { file: '<input>', names }) };
    } catch (e) {
      return parseError(e);
    }
  });

  app.post('/api/print', { schema: S.printSchema }, async (req) => {
    const body = req.body as { grammar: string; tree: Tree };
    const g = grammarOf(body.grammar);
    try {
      return { text: printTree(g.grammar, body.tree) };
    } catch (e) {
      return treeError(e, '$.tree');
    }
  });

  app.post('/api/mask', { schema: S.maskSchema }, async (req) => {
    const body = req.body as { grammar: string; model?: string; prefix: string; sample: number; names?: NameBindings };
    const g = grammarOf(body.grammar);
    const m = modelOf(body.model);
    const names = namesOf(g, body.names);
    return withSlot(async () => {
      let c;
      try {
        c = boundConstraint(maskEngine(m.model, g.grammar), names);
      } catch (e) {
        return modelError(e);
      }
      const state = c.advanceBytes(c.start(), new TextEncoder().encode(body.prefix));
      const viable = c.viable(state);
      const mask = new Uint32Array((c.vocabSize + 31) >>> 5);
      if (viable) c.writeAllowed(state, Infinity, mask);
      let count = 0;
      const allowed: { id: number; text: string }[] = [];
      for (let id = 0; id < c.vocabSize; id++) {
        if ((mask[id >>> 5] & (1 << (id & 31))) === 0) continue;
        count++;
        if (allowed.length < body.sample) allowed.push({ id, text: m.model.vocabulary.text(id) });
      }
      return {
        viable,
        complete: viable && c.isComplete(state),
        allowed_count: count,
        vocab_size: c.vocabSize,
        tokens_to_complete: viable ? c.tokensToComplete(state) : null,
        allowed,
      };
    });
  });

  app.post('/api/execute', { schema: S.executeSchema }, async (req) => {
    const body = req.body as { grammar: string; text?: string; tree?: Tree };
    const g = grammarOf(body.grammar);
    if ((body.text === undefined) === (body.tree === undefined)) {
      throw badField('$', body.text === undefined ? 'neither "text" nor "tree"' : 'both "text" and "tree"', 'exactly one of them');
    }
    if (g.execute === null) throw new ApiError(422, 'no_executor', `$.grammar: grammar ${g.id} (${g.grammar.name}) has no executor here; expected one of the grammars with "executor": true in GET /api/grammars (sql, lf)`, '$.grammar');
    const names = namesOf(g, undefined);
    let tree: Tree;
    let text: string;
    if (body.text !== undefined) {
      try {
        tree = createParser(g.grammar).parse(body.text, { file: '<input>', names }) as Tree;
      } catch (e) {
        return parseError(e);
      }
      text = body.text;
    } else {
      try {
        text = printTree(g.grammar, body.tree);
      } catch (e) {
        return treeError(e, '$.tree');
      }
      tree = body.tree!;
    }
    const r = await withSlot(() => g.execute!(tree, { grammar: g.grammar, timeoutMs: timeLimitMs }));
    if (!r.ok) throw new ApiError(422, 'execution_error', `${body.text !== undefined ? '<input>' : '$.tree'}: ${r.error}`, body.text !== undefined ? '<input>:1:1' : '$.tree');
    return { ok: true, value: r.value, tree, text };
  });

  app.post('/api/decode', { schema: S.decodeSchema }, async (req) => {
    const b = req.body as {
      question: string; grammar: string; model?: string; constrained: boolean; beam?: number; sample?: boolean;
      temperature?: number; top_p?: number; seed?: number; max_tokens?: number; prefix?: string;
      names?: NameBindings; steps?: boolean; execute?: boolean;
    };
    const g = grammarOf(b.grammar);
    const m = modelOf(b.model);
    const names = namesOf(g, b.names);
    if (b.beam !== undefined && b.sample === true) throw badField('$.sample', 'true together with $.beam', 'one decoding strategy: beam or sample');
    if (!b.sample && (b.temperature !== undefined || b.top_p !== undefined || b.seed !== undefined)) {
      const f = b.temperature !== undefined ? 'temperature' : b.top_p !== undefined ? 'top_p' : 'seed';
      throw badField(`$.${f}`, 'a sampling option without "sample": true', '"sample": true, or no sampling options');
    }
    const limit = m.model.config.maxPositions - 1;
    if (b.max_tokens !== undefined && b.max_tokens > limit) throw badField('$.max_tokens', String(b.max_tokens), `at most ${limit} for model ${m.id}`);
    const maxTokens = b.max_tokens ?? Math.min(128, limit);
    const prefix = b.prefix ?? m.model.prefixFor(g.grammar.name);
    const question = b.question.startsWith(prefix) ? b.question : prefix + b.question;
    // the encoder has fixed positions; a longer input would fail inside onnxruntime
    const inputTokens = m.model.encodeQuestion(question).length;
    if (inputTokens > m.model.config.maxPositions) {
      throw badField('$.question', `${inputTokens} tokens (with the prefix ${JSON.stringify(prefix)})`, `at most ${m.model.config.maxPositions} tokens for model ${m.id}`);
    }
    const strategy = b.beam !== undefined ? 'beam' : b.sample ? 'sample' : 'greedy';
    stats.decoded++;
    return withSlot(async () => {
      const deadline = Date.now() + timeLimitMs;
      let timedOut = false;
      const model = stoppable(m.model, () => {
        if (Date.now() > deadline) timedOut = true;
        return timedOut || gone(req);
      });
      let r;
      try {
        r = await generate(model, question, {
          grammar: g.grammar, names, unconstrained: !b.constrained, strategy, beamWidth: b.beam,
          temperature: b.temperature, topP: b.top_p, seed: b.seed, maxTokens,
        });
      } catch (e) {
        if (e instanceof Stopped) {
          if (timedOut) {
            stats.stoppedTime++;
            throw timeLimit(timeLimitMs);
          }
          stats.stoppedGone++;
          throw new ApiError(499, 'client_closed', 'the client closed the connection; decoding stopped');
        }
        return modelError(e);
      }
      const out: Record<string, unknown> = {
        question, text: r.text, tree: r.tree, parses: r.parses, well_typed: r.well_typed, parse_error: r.parse_error,
        canonical: r.tree !== null && r.well_typed ? printTree(g.grammar, r.tree) : null,
        tokens: r.tokens, token_texts: r.tokenTexts, finished: r.finished, score: r.score, strategy,
        constrained: b.constrained, model: m.id, grammar: g.id, model_ms: r.model_ms, mask_ms: r.mask_ms, total_ms: r.total_ms,
      };
      if (b.steps) {
        let c;
        try {
          c = boundConstraint(maskEngine(m.model, g.grammar), names);
        } catch (e) {
          return modelError(e);
        }
        Object.assign(out, replaySteps(c, r.tokens, r.tokenTexts, maxTokens, (ids) => textOf(m.model, ids)));
        out.tree_view = r.tree !== null && r.well_typed ? treeView(g.grammar, r.tree) : null;
      }
      if (b.execute) {
        if (g.execute === null) out.answer = { ok: false, error: `grammar ${g.id} has no executor here` };
        else if (!r.well_typed || r.tree === null) out.answer = { ok: false, error: 'the output is not a well-typed program, so it was not run' };
        else out.answer = await g.execute(r.tree as Tree, { grammar: g.grammar, timeoutMs: timeLimitMs });
      } else out.answer = null;
      return out;
    });
  });

  for (const [url, file] of Object.entries(page)) {
    app.get(url, { schema: { hide: true } }, async (_req, reply) =>
      reply
        .type(file.type)
        .header('cache-control', 'no-cache')
        // the page loads only its own script and style and talks only to this server
        .header('content-security-policy', "default-src 'none'; script-src 'self'; style-src 'self'; connect-src 'self'; img-src 'self'; base-uri 'none'; form-action 'none'; frame-ancestors 'none'")
        .header('x-content-type-options', 'nosniff')
        .send(file.body),
    );
  }

  app.addHook('onClose', async () => {
    await registry.close();
  });
  return app;
}
