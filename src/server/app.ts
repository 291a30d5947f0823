/**
 * The server's assembly: one fastify instance with JSON-only body parsing, the documented error
 * shape for every failure, the OpenAPI document, and the routes — one file per route under
 * routes/, each given the shared ServerContext (context.ts). See index.ts for the overview.
 *
 * Route files: check.ts (POST /api/check), decode.ts (POST /api/decode), parse.ts, print.ts,
 * mask.ts, execute.ts (POST /api/…), grammars.ts, models.ts (GET /api/…), page.ts (GET /,
 * /app.js, /style.css). Adding a route: a file exporting `register(app, ctx)`, its schema in
 * schemas.ts, one line in ROUTES below.
 */
import Fastify, { type FastifyInstance } from 'fastify';
import swagger from '@fastify/swagger';
import { ServerContext, type ServerLimits, type ServerStats } from './context.ts';
import { ApiError, bodyTooLarge, checkBodyDepth, emptyBody, parseJsonBody, unsupportedMediaType, validationError, type AjvIssue } from './errors.ts';
import { Gate } from './gate.ts';
import type { Registry } from './registry.ts';
import * as check from './routes/check.ts';
import * as decode from './routes/decode.ts';
import * as execute from './routes/execute.ts';
import * as grammars from './routes/grammars.ts';
import * as mask from './routes/mask.ts';
import * as models from './routes/models.ts';
import * as page from './routes/page.ts';
import * as parse from './routes/parse.ts';
import * as print from './routes/print.ts';
import { sharedSchemas } from './schemas.ts';
import { MAX_JSON_DEPTH } from '../util/depth.ts';
import { pointerToPath } from '../util/json.ts';

export type { ServerLimits, ServerStats } from './context.ts';

declare module 'fastify' {
  interface FastifyInstance {
    treewrightStats: ServerStats;
  }
}

const ROUTES: readonly { register(app: FastifyInstance, ctx: ServerContext): void }[] = [grammars, models, check, parse, print, mask, execute, decode, page];

/** Builds the server (not yet listening). Closing the app closes the registry. */
export async function buildServer(registry: Registry, limits: ServerLimits = {}): Promise<FastifyInstance> {
  const bodyLimit = limits.bodyLimit ?? 1024 * 1024;
  const ctx = new ServerContext(registry, new Gate(limits.maxActive ?? 2, limits.maxQueued ?? 64), bodyLimit, limits.timeLimitMs ?? 30_000, new Gate(limits.execActive ?? 2, limits.execQueued ?? 16));
  const app = Fastify({
    bodyLimit,
    requestTimeout: 120_000,
    logger: false,
    ajv: { customOptions: { coerceTypes: false, removeAdditional: false, useDefaults: true, allErrors: false } },
  });
  app.decorate('treewrightStats', ctx.stats);

  // JSON only: other content types (text/plain included) are 415
  app.removeAllContentTypeParsers();
  app.addContentTypeParser('application/json', { parseAs: 'string', bodyLimit }, (_req, body, done) => {
    try {
      done(null, checkBodyDepth(parseJsonBody(body as string)));
    } catch (e) {
      done(e as Error, undefined);
    }
  });
  // responses are plain JSON.stringify: the response schemas document, they do not filter
  app.setSerializerCompiler(() => (data) => JSON.stringify(data));
  for (const s of sharedSchemas) app.addSchema(s);

  app.setErrorHandler((err, req, reply) => {
    let e: ApiError;
    const fe = err as { code?: string; statusCode?: number; validation?: AjvIssue[]; message: string };
    if (err instanceof ApiError) e = err;
    else if (fe.validation && fe.validation.length > 0) {
      try {
        e = validationError(fe.validation[0]!, req.body);
      } catch {
        // describing the value failed (it should not: bodies are depth-checked); still our shape
        const path = pointerToPath(fe.validation[0]!.instancePath);
        e = new ApiError(400, 'invalid_request', `${path}: ${fe.validation[0]!.message ?? 'invalid value'}`, path);
      }
    }
    else if (fe.code === 'FST_ERR_CTP_BODY_TOO_LARGE') e = bodyTooLarge(bodyLimit);
    else if (fe.code === 'FST_ERR_CTP_INVALID_MEDIA_TYPE') e = unsupportedMediaType(req.headers['content-type'] ?? '');
    else if (fe.code === 'FST_ERR_CTP_EMPTY_JSON_BODY') e = emptyBody();
    else if (typeof fe.statusCode === 'number' && fe.statusCode >= 400 && fe.statusCode < 500) e = new ApiError(fe.statusCode, (fe.code ?? 'bad_request').toLowerCase(), fe.message);
    else if (err instanceof RangeError && /call stack/i.test(err.message)) {
      // a stage recursed past the stack on input no limit caught: refused, not an internal error
      e = new ApiError(400, 'too_deep', `request: nested too deeply to process (${err.message}); expected at most ${MAX_JSON_DEPTH} levels of JSON and programs within the parser's nesting limit`);
    } else {
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
      info: { title: 'treewright server', version: '0.1.0', description: 'Grammar checks, constrained decoding, parsing, printing, token masks and execution over HTTP. Every error is JSON {error: {code, message, location?}}.' },
    },
  });
  app.get('/api/openapi.json', { schema: { summary: 'This API as an OpenAPI 3.1 document' } }, async () => app.swagger());
  for (const route of ROUTES) route.register(app, ctx);

  app.addHook('onClose', async () => {
    await registry.close();
  });
  return app;
}
