/** GET /api/models — the models this server loaded. */
import type { FastifyInstance } from 'fastify';
import type { ServerContext } from '../context.ts';
import { modelsSchema } from '../schemas.ts';

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.get('/api/models', { schema: modelsSchema }, async () => ({
    models: [...ctx.registry.models.values()].map((m) => ({ id: m.id, dir: m.dir, vocab_size: m.model.vocabSize, max_positions: m.model.config.maxPositions, cached: m.model.cached })),
  }));
}
