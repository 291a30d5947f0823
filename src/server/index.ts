/**
 * server/ — the HTTP face of treewright: a JSON API under /api/ and a decoding playground page at /.
 *
 * Produces `startServer(options)` → a listening fastify instance (and `buildServer(registry,
 * limits)` for tests, which never listen). Routes (OpenAPI 3.1 document at GET /api/openapi.json):
 *   POST /api/check     description text → located diagnostics; a clean one gets a grammar id
 *   POST /api/decode  question → program (constrained or not; greedy, beam, sampling), optional
 *                       per-step view (chosen token, allowed-token count, text so far, tree view)
 *                       and executed answer
 *   POST /api/parse     program text → JSON tree          POST /api/print  tree → canonical text
 *   POST /api/mask      text prefix → viable, complete, allowed-token count and a sample of them
 *   POST /api/execute   program (text or tree) → answer (SQL read-only / LF fact base)
 *   GET  /api/grammars, /api/models, /api/openapi.json;  GET / (page), /app.js, /style.css
 *
 * Example:
 *   const app = await startServer({ port: 8080, models: ['models/coop'] });
 *   // curl -s localhost:8080/api/decode -H 'content-type: application/json' \
 *   //   -d '{"question":"which orchards grow elstar?","grammar":"lf","steps":true,"execute":true}'
 *   await app.close();
 *
 * Files: app.ts assembles the server; routes/ holds one file per route (check, decode, parse, print,
 * mask, execute, grammars, models, page); context.ts what they share (registry, gate, lookups);
 * errors.ts the error catalogue; schemas.ts the JSON Schemas behind validation and OpenAPI.
 *
 * Limits: request body (default 1 MiB → 413), a wall-clock limit per decode request (default
 * 30 s, an AbortSignal that decoding checks before every decoder step → 504), at most `maxActive` model requests at
 * once with `maxQueued` waiting (defaults 2 and 64), and apart from them `execActive` executor runs
 * with `execQueued` waiting (2 and 16) — beyond that 503 at once, never an unbounded queue. Request
 * bodies and trees nest at most 500 deep, programs within the parser's nesting limit
 * (src/util/depth.ts). Executors are bound by the operator (registry.ts), never by a grammar name. Every error is JSON `{error: {code, message, location?}}`, the location a `file:line:col`
 * or a JSON path into the request body. Every request's compile work (descriptions, names,
 * parsers, parsing, printing, mask tables) runs in compile workers (compiler.ts: 2 threads, 10 s
 * per job → 504, 512 MB heap each → 422); checked descriptions (64 KiB text limit) are cached by
 * content hash (64 most recent).
 * Binds 127.0.0.1 unless told otherwise.
 *
 * Start-up: loads every model, compiles every grammar and the mask tables of every model × grammar
 * pair (on the main thread for decoding, and in each compile worker before it takes jobs) (measured: 0.06–0.7 s per pair for the demo model's 1,100 tokens on the shared machine),
 * and builds the demo database when no --db is given.
 *
 * Worst-case cost: a decode request costs what decode/ costs (model steps × mask fills), plus
 * with `steps` one more mask fill per token; the other routes are linear in their input (parse is
 * ohm's O(n · rules), in a worker). Decoding runs on the main thread between onnxruntime calls, so at most about
 * one request per core makes progress; the gate keeps the rest waiting in a bounded queue.
 */
import type { FastifyInstance } from 'fastify';
import { buildServer, type ServerLimits } from './app.ts';
import { Registry, type RegistryOptions } from './registry.ts';

export { buildServer, type ServerLimits, type ServerStats } from './app.ts';
export { Registry, REPO, SHIPPED, type RegistryOptions, type GrammarEntry, type ModelEntry, type CheckResult } from './registry.ts';
export { ApiError } from './errors.ts';
export { Gate } from './gate.ts';
export { replaySteps, treeView, type Step, type TreeViewNode } from './steps.ts';

export interface StartOptions extends RegistryOptions, ServerLimits {
  readonly host?: string;
  readonly port?: number;
}

/** Loads grammars and models, builds the server and listens (default 127.0.0.1:8080). */
export async function startServer(opts: StartOptions = {}): Promise<FastifyInstance> {
  const registry = await Registry.open(opts);
  let app: FastifyInstance | null = null;
  try {
    app = await buildServer(registry, opts);
    await app.listen({ host: opts.host ?? '127.0.0.1', port: opts.port ?? 8080 });
    return app;
  } catch (e) {
    // closing the app closes the registry (its onClose hook); without an app, close it here
    if (app !== null) await app.close();
    else await registry.close();
    throw e;
  }
}
