/**
 * POST /api/check — description text → located diagnostics; a description without errors gets a
 * grammar id the other routes accept. Compiled, and its name bindings checked, in a compile worker
 * (time limit → 504, memory limit → 422), behind the concurrency gate; results cached by content
 * hash (registry.ts).
 */
import type { FastifyInstance } from 'fastify';
import { jobError, type ServerContext } from '../context.ts';
import { checkSchema } from '../schemas.ts';

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.post('/api/check', { schema: checkSchema }, async (req) => {
    const body = req.body as { text: string; file: string };
    try {
      return await ctx.withSlot(() => ctx.registry.check(body.text, body.file));
    } catch (e) {
      return jobError(e, '$.tree', '$.text', 'description');
    }
  });
}
