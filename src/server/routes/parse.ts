/** POST /api/parse — program text → JSON tree, names checked against the grammar's bindings (422 located). */
import type { FastifyInstance } from 'fastify';
import type { NameBindings } from '../../description/ir.ts';
import { createParser } from '../../tree/index.ts';
import { parseError, type ServerContext } from '../context.ts';
import { parseSchema } from '../schemas.ts';

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.post('/api/parse', { schema: parseSchema }, async (req) => {
    const body = req.body as { grammar: string; text: string; names?: NameBindings };
    const g = ctx.grammarOf(body.grammar);
    const names = ctx.namesOf(g, body.names);
    try {
      return { tree: createParser(g.grammar).parse(body.text, { file: '<input>', names }) };
    } catch (e) {
      return parseError(e);
    }
  });
}
