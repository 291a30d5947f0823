/**
 * GET / (index.html), /app.js, /style.css — the decoding playground page, read once at start.
 * Hidden from the OpenAPI document. The page loads only its own script and style and talks only
 * to this server (content security policy below).
 */
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { FastifyInstance } from 'fastify';

const PAGE_DIR = join(dirname(fileURLToPath(import.meta.url)), '..', 'page');
const PAGE_FILES: Record<string, string> = {
  '/': 'index.html',
  '/app.js': 'app.js',
  '/style.css': 'style.css',
};
const TYPES: Record<string, string> = { html: 'text/html; charset=utf-8', js: 'text/javascript; charset=utf-8', css: 'text/css; charset=utf-8' };
const POLICY = "default-src 'none'; script-src 'self'; style-src 'self'; connect-src 'self'; img-src 'self'; base-uri 'none'; form-action 'none'; frame-ancestors 'none'";

export function register(app: FastifyInstance): void {
  for (const [url, file] of Object.entries(PAGE_FILES)) {
    const body = readFileSync(join(PAGE_DIR, file));
    const type = TYPES[file.split('.').pop()!]!;
    app.get(url, { schema: { hide: true } }, async (_req, reply) =>
      reply.type(type).header('cache-control', 'no-cache').header('content-security-policy', POLICY).header('x-content-type-options', 'nosniff').send(body),
    );
  }
}
