/**
 * POST /api/decode — question → program with a model, constrained to a grammar or not (greedy,
 * beam, sampling); optionally each step (chosen token, allowed-token count, text so far) with a
 * tree view, and the executed answer.
 *
 * Checks before a slot is taken: strategy flags, `max_tokens` and the question's length against
 * the model's positions (the model stage's outputLimit and input: 400 at `$.max_tokens` /
 * `$.question`). Cancellation: one AbortController per request, aborted by the time limit
 * (504 time_limit) or by the client closing its connection (499, nobody to answer); decoding
 * checks its signal before every decoder step.
 */
import type { FastifyInstance, FastifyRequest } from 'fastify';
import { decode, textOf, type DecodeResult } from '../../decode/index.ts';
import type { NameBindings } from '../../description/ir.ts';
import type { Tree as ExecTree } from '../../exec/index.ts';
import { InputTooLong, OutputTooLong } from '../../model/index.ts';
import type { MaskConstraint } from '../../masks/index.ts';
import type { Tree } from '../../tree/index.ts';
import { modelError, withExecSlot, type ServerContext } from '../context.ts';
import { namesMsg } from '../registry.ts';
import { ApiError, badField, timeLimit } from '../errors.ts';
import { decodeSchema } from '../schemas.ts';
import { replaySteps, type TreeViewNode } from '../steps.ts';

/** What a compile worker makes of a decoder's output ('output' job). */
interface OutputReply {
  tree: Tree | null;
  valid: boolean;
  well_typed: boolean;
  parse_error: string | null;
  canonical: string | null;
  tree_view: TreeViewNode | null;
}

interface Body {
  question: string;
  grammar: string;
  model?: string;
  constrained: boolean;
  beam?: number;
  sample?: boolean;
  temperature?: number;
  top_p?: number;
  seed?: number;
  max_tokens?: number;
  prefix?: string;
  names?: NameBindings;
  steps?: boolean;
  execute?: boolean;
}

/** Why a decode was stopped (the AbortSignal's reason). */
class Stopped extends Error {
  constructor(readonly why: 'time' | 'gone') {
    super(why === 'time' ? 'time limit' : 'client gone');
  }
}

/**
 * An AbortSignal for one request: aborted with Stopped('time') after `ms`, or Stopped('gone')
 * when the client's connection closes. `done()` removes the timer and the listener.
 */
function requestSignal(req: FastifyRequest, ms: number): { signal: AbortSignal; done: () => void } {
  const controller = new AbortController();
  const timer = setTimeout(() => controller.abort(new Stopped('time')), ms);
  const socket = req.raw.socket;
  const gone = () => controller.abort(new Stopped('gone'));
  if (socket?.destroyed) gone();
  else socket?.once('close', gone);
  return {
    signal: controller.signal,
    done: () => {
      clearTimeout(timer);
      socket?.off('close', gone);
    },
  };
}

export function register(app: FastifyInstance, ctx: ServerContext): void {
  app.post('/api/decode', { schema: decodeSchema }, async (req) => {
    const b = req.body as Body;
    const g = ctx.grammarOf(b.grammar);
    const m = ctx.modelOf(b.model);
    const names = ctx.namesOf(g, b.names);
    if (b.beam !== undefined && b.sample === true) throw badField('$.sample', 'true together with $.beam', 'one decoding strategy: beam or sample');
    if (!b.sample && (b.temperature !== undefined || b.top_p !== undefined || b.seed !== undefined)) {
      const f = b.temperature !== undefined ? 'temperature' : b.top_p !== undefined ? 'top_p' : 'seed';
      throw badField(`$.${f}`, 'a sampling option without "sample": true', '"sample": true, or no sampling options');
    }
    let maxTokens: number;
    let input;
    try {
      maxTokens = m.model.outputLimit(b.max_tokens);
      input = m.model.input(b.question, g.grammar.name, b.prefix);
    } catch (e) {
      if (e instanceof OutputTooLong) throw badField('$.max_tokens', String(e.requested), `at most ${e.limit} for model ${m.id}`);
      if (e instanceof InputTooLong) throw badField('$.question', `${e.tokens} tokens (with the prefix ${JSON.stringify(e.prefix)})`, `at most ${e.limit} tokens for model ${m.id}`);
      throw e;
    }
    const strategy = b.beam !== undefined ? 'beam' : b.sample ? 'sample' : 'greedy';
    ctx.stats.decoded++;
    let program: ExecTree | null = null;
    const request = b.names === undefined ? null : b.names;
    const out = await ctx.withSlot(async () => {
      const { signal, done } = requestSignal(req, ctx.timeLimitMs);
      let r: DecodeResult;
      let c: MaskConstraint | null = null;
      try {
        // the mask tables and the binding come from a compile worker unless built at start
        // (the request's own names are checked there); the main thread only runs the model
        if (b.constrained || b.steps) c = await ctx.registry.constraintFor(g, m, names, request).catch((e) => ctx.jobFailure(e));
        r = await decode(m.model, input.ids, {
          constraint: b.constrained ? c : null, strategy, beamWidth: b.beam,
          temperature: b.temperature, topP: b.top_p, seed: b.seed, maxTokens, signal,
        });
      } catch (e) {
        if (signal.aborted && signal.reason instanceof Stopped) {
          if (signal.reason.why === 'time') {
            ctx.stats.stoppedTime++;
            throw timeLimit(ctx.timeLimitMs);
          }
          ctx.stats.stoppedGone++;
          throw new ApiError(499, 'client_closed', 'the client closed the connection; decoding stopped');
        }
        if (e instanceof ApiError) throw e;
        return modelError(e);
      } finally {
        done();
      }
      // the output parsed, checked with the names, printed and viewed in a compile worker
      const o = await ctx.job<OutputReply>(
        { kind: 'output', grammar: g.ref, text: r.text, names: namesMsg(names), request: request === null ? null : namesMsg(request), view: b.steps === true },
        `checking the output of ${g.id}`,
      );
      const out: Record<string, unknown> = {
        question: input.text, text: r.text, tree: o.tree, valid: o.valid, well_typed: o.well_typed, parse_error: o.parse_error,
        canonical: o.canonical,
        tokens: r.tokens, token_texts: r.tokenTexts, finished: r.finished, score: r.score, strategy,
        constrained: b.constrained, model: m.id, grammar: g.id, model_ms: r.model_ms, mask_ms: r.mask_ms, total_ms: r.total_ms,
      };
      if (b.steps) {
        Object.assign(out, replaySteps(c!, r.tokens, r.tokenTexts, maxTokens, (ids) => textOf(m.model, ids), (id) => (m.byteIds.has(id) ? m.model.vocabulary.byteAt(id, 0) : null)));
        out.tree_view = o.tree_view;
      }
      if (b.execute) {
        if (g.execute === null) out.answer = { ok: false, error: `grammar ${g.id} has no executor here` };
        else if (!o.well_typed || o.tree === null) out.answer = { ok: false, error: 'the output is not a well-typed program, so it was not run' };
        else program = o.tree as ExecTree;
      } else out.answer = null;
      return out;
    });
    // the program runs after the model slot is released, behind the executors' own gate
    if (program !== null) {
      const run = g.execute!;
      const tree = program;
      try {
        out.answer = await withExecSlot(ctx, () => run(tree, { grammar: g.grammar, timeoutMs: ctx.timeLimitMs }));
      } catch (e) {
        // the decoded program is still the answer to this request: only its run is refused
        if (!(e instanceof ApiError) || e.status !== 503) throw e;
        out.answer = { ok: false, error: `not run: ${e.message}` };
      }
    }
    return out;
  });
}
