/** POST /api/print — JSON tree → canonical program text (an invalid tree is 422 at its JSON path). */
import type { FastifyInstance } from 'fastify';
import { printTree, type Tree } from '../../tree/index.ts';
import { treeError, type ServerContext } from '../context.ts';
import { printSchema } from '../schemas.ts';

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.post('/api/print', { schema: printSchema }, async (req) => {
    const body = req.body as { grammar: string; tree: Tree };
    const g = ctx.grammarOf(body.grammar);
    try {
      return { text: printTree(g.grammar, body.tree) };
    } catch (e) {
      return treeError(e, '$.tree');
    }
  });
}
