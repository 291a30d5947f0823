/** POST /api/print — JSON tree → canonical program text (an invalid tree is 422 at its JSON path); printed in a compile worker. */
import type { FastifyInstance } from 'fastify';
import type { ServerContext } from '../context.ts';
import { printSchema } from '../schemas.ts';

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.post('/api/print', { schema: printSchema }, async (req) => {
    const body = req.body as { grammar: string; tree: unknown };
    const g = ctx.grammarOf(body.grammar);
    return ctx.job<{ text: string }>({ kind: 'print', grammar: g.ref, tree: body.tree }, `printing $.tree with ${g.id}`);
  });
}
