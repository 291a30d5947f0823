/**
 * POST /api/mask — the tokens a grammar allows after a text prefix, for a model's tokenizer:
 * viable, complete, allowed count, fewest tokens to complete, and a sample of the allowed tokens.
 */
import type { FastifyInstance } from 'fastify';
import { boundConstraint, maskEngine } from '../../decode/index.ts';
import type { NameBindings } from '../../description/ir.ts';
import { modelError, type ServerContext } from '../context.ts';
import { maskSchema } from '../schemas.ts';

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.post('/api/mask', { schema: maskSchema }, async (req) => {
    const body = req.body as { grammar: string; model?: string; prefix: string; sample: number; names?: NameBindings };
    const g = ctx.grammarOf(body.grammar);
    const m = ctx.modelOf(body.model);
    const names = ctx.namesOf(g, body.names);
    return ctx.withSlot(async () => {
      let c;
      try {
        c = boundConstraint(maskEngine(m.model, g.grammar), names);
      } catch (e) {
        return modelError(e);
      }
      const state = c.advanceBytes(c.start(), new TextEncoder().encode(body.prefix));
      const viable = c.viable(state);
      const mask = new Uint32Array((c.vocabSize + 31) >>> 5);
      if (viable) c.writeAllowed(state, Infinity, mask);
      let count = 0;
      const allowed: { id: number; text: string; byte: number | null }[] = [];
      for (let id = 0; id < c.vocabSize; id++) {
        if ((mask[id >>> 5]! & (1 << (id & 31))) === 0) continue;
        count++;
        if (allowed.length < body.sample) allowed.push({ id, text: m.model.vocabulary.text(id), byte: m.byteIds.has(id) ? m.model.vocabulary.byteAt(id, 0) : null });
      }
      return {
        viable,
        complete: viable && c.isComplete(state),
        allowed_count: count,
        vocab_size: c.vocabSize,
        tokens_to_complete: viable ? c.tokensToComplete(state) : null,
        allowed,
      };
    });
  });
}
