/**
 * POST /api/parse — program text → JSON tree, names checked against the grammar's bindings (422
 * located). Parsed in a compile worker (compiler.ts): a long or deeply nested text never holds the
 * main thread.
 */
import type { FastifyInstance } from 'fastify';
import type { NameBindings } from '../../description/ir.ts';
import type { Tree } from '../../tree/index.ts';
import type { ServerContext } from '../context.ts';
import { namesMsg } from '../registry.ts';
import { parseSchema } from '../schemas.ts';

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.post('/api/parse', { schema: parseSchema }, async (req) => {
    const body = req.body as { grammar: string; text: string; names?: NameBindings };
    const g = ctx.grammarOf(body.grammar);
    const names = ctx.namesOf(g, body.names);
    return ctx.job<{ tree: Tree }>(
      { kind: 'parse', grammar: g.ref, text: body.text, file: '<input>', names: namesMsg(names), request: body.names === undefined ? null : namesMsg(body.names) },
      `parsing $.text with ${g.id}`,
    );
  });
}
