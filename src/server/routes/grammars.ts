/** GET /api/grammars — the grammars this server knows: loaded at start, then checked descriptions. */
import type { FastifyInstance } from 'fastify';
import type { ServerContext } from '../context.ts';
import { grammarsSchema } from '../schemas.ts';

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.get('/api/grammars', { schema: grammarsSchema }, async () => ({
    grammars: ctx.registry.grammarIds().map((id) => {
      const e = ctx.registry.grammar(id)!;
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
}
