/**
 * POST /api/check — description text → located diagnostics; a description without errors gets a
 * grammar id the other routes accept. Compiled in the checker's worker thread (time limit → 504),
 * behind the concurrency gate; results cached by content hash (registry.ts).
 */
import type { FastifyInstance } from 'fastify';
import { CheckTimeout } from '../checker.ts';
import type { ServerContext } from '../context.ts';
import { ApiError } from '../errors.ts';
import { checkSchema } from '../schemas.ts';

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.post('/api/check', { schema: checkSchema }, async (req) => {
    const body = req.body as { text: string; file: string };
    try {
      return await ctx.withSlot(() => ctx.registry.check(body.text, body.file));
    } catch (e) {
      if (e instanceof CheckTimeout) throw new ApiError(504, 'time_limit', `$.text: ${e.message} and was stopped; expected a smaller description`, '$.text');
      throw e;
    }
  });
}
