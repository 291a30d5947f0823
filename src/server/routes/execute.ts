/**
 * POST /api/execute — a program (text or tree) → its answer with the grammar's executor (SQL
 * read-only in a child process with a time limit; LF over the fact base), behind the executors'
 * own gate (never a model slot). A tree gets the same checks as a text: the server's name bindings,
 * then its canonical print parsed again.
 */
import type { FastifyInstance } from 'fastify';
import type { Tree } from '../../tree/index.ts';
import { withExecSlot, type ServerContext } from '../context.ts';
import { namesMsg } from '../registry.ts';
import { ApiError, badField } from '../errors.ts';
import { executeSchema } from '../schemas.ts';

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.post('/api/execute', { schema: executeSchema }, async (req) => {
    const body = req.body as { grammar: string; text?: string; tree?: Tree };
    const g = ctx.grammarOf(body.grammar);
    if ((body.text === undefined) === (body.tree === undefined)) {
      throw badField('$', body.text === undefined ? 'neither "text" nor "tree"' : 'both "text" and "tree"', 'exactly one of them');
    }
    if (g.execute === null) throw new ApiError(422, 'no_executor', `$.grammar: grammar ${g.id} (${g.grammar.name}) has no executor here; expected one of the grammars with "executor": true in GET /api/grammars (sql, lf)`, '$.grammar');
    const names = namesMsg(ctx.namesOf(g, undefined));
    // parsed (or, for a tree, checked with the server's bindings, printed and its print parsed
    // again, so what runs is what the text route would have run) in a compile worker
    const { tree, text } =
      body.text !== undefined
        ? { ...(await ctx.job<{ tree: Tree }>({ kind: 'parse', grammar: g.ref, text: body.text, file: '<input>', names, request: null }, `parsing $.text with ${g.id}`)), text: body.text }
        : await ctx.job<{ tree: Tree; text: string }>({ kind: 'program', grammar: g.ref, tree: body.tree, names }, `checking $.tree with ${g.id}`);
    const r = await withExecSlot(ctx, () => g.execute!(tree, { grammar: g.grammar, timeoutMs: ctx.timeLimitMs }));
    if (!r.ok) throw new ApiError(422, 'execution_error', `${body.text !== undefined ? '<input>' : '$.tree'}: ${r.error}`, body.text !== undefined ? '<input>:1:1' : '$.tree');
    return { ok: true, value: r.value, tree, text };
  });
}
