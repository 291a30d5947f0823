/**
 * POST /api/mask — the tokens a grammar allows after a text prefix, for a model's tokenizer:
 * viable, complete, allowed count, fewest tokens to complete, and a sample of the allowed tokens.
 * Computed in a compile worker (mask tables, name binding, the prefix walk); the main thread only
 * spells the sampled token ids.
 */
import type { FastifyInstance } from 'fastify';
import { join } from 'node:path';
import type { NameBindings } from '../../description/ir.ts';
import type { ServerContext } from '../context.ts';
import { namesMsg } from '../registry.ts';
import { maskSchema } from '../schemas.ts';

interface MaskReply {
  viable: boolean;
  complete: boolean;
  allowed_count: number;
  vocab_size: number;
  tokens_to_complete: number | null;
  allowed: number[];
}

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.post('/api/mask', { schema: maskSchema }, async (req) => {
    const body = req.body as { grammar: string; model?: string; prefix: string; sample: number; names?: NameBindings };
    const g = ctx.grammarOf(body.grammar);
    const m = ctx.modelOf(body.model);
    const names = ctx.namesOf(g, body.names);
    return ctx.withSlot(async () => {
      const r = await ctx.job<MaskReply>(
        { kind: 'mask', grammar: g.ref, tokenizer: join(m.dir, 'tokenizer.json'), names: namesMsg(names), request: body.names === undefined ? null : namesMsg(body.names), prefix: body.prefix, sample: body.sample },
        `the mask of ${g.id} for ${m.id} after $.prefix`,
      );
      const vocab = m.model.vocabulary;
      return { ...r, allowed: r.allowed.map((id) => ({ id, text: vocab.text(id), byte: m.byteIds.has(id) ? vocab.byteAt(id, 0) : null })) };
    });
  });
}
