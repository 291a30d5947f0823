/**
 * POST /api/execute — a program (text or tree) → its answer with the grammar's executor (SQL
 * read-only in a child process with a time limit; LF over the fact base), behind the executors'
 * own gate (never a model slot). A tree gets the same checks as a text: the server's name bindings,
 * then its canonical print parsed again.
 */
import type { FastifyInstance } from 'fastify';
import { assertTree, createParser, printTree, type Tree } from '../../tree/index.ts';
import { parseError, treeError, withExecSlot, type ServerContext } from '../context.ts';
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
    const names = ctx.namesOf(g, undefined);
    let tree: Tree;
    let text: string;
    if (body.text !== undefined) {
      try {
        tree = createParser(g.grammar).parse(body.text, { file: '<input>', names });
      } catch (e) {
        return parseError(e);
      }
      text = body.text;
    } else {
      // the same checks as text: the tree is printed, and the print parsed with the server's
      // bindings (a name refused as text is refused as a tree), so what runs is what the text
      // route would have run
      try {
        assertTree(g.grammar, body.tree, { names });
        text = printTree(g.grammar, body.tree);
      } catch (e) {
        return treeError(e, '$.tree');
      }
      try {
        tree = createParser(g.grammar).parse(text, { file: '<printed tree>', names });
      } catch (e) {
        return parseError(e);
      }
    }
    const r = await withExecSlot(ctx, () => g.execute!(tree, { grammar: g.grammar, timeoutMs: ctx.timeLimitMs }));
    if (!r.ok) throw new ApiError(422, 'execution_error', `${body.text !== undefined ? '<input>' : '$.tree'}: ${r.error}`, body.text !== undefined ? '<input>:1:1' : '$.tree');
    return { ok: true, value: r.value, tree, text };
  });
}
