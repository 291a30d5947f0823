// Cancellation: an AbortSignal in the decode options stops greedy, sampling and beam decoding
// before the next decoder step, rejecting with the signal's reason (the server's time limit and
// client-gone handling rest on this).
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { decode, decodeStream, generate } from '../../src/decode/index.ts';
import { loadModel, type Seq2SeqModel } from '../../src/model/index.ts';

vi.setConfig({ testTimeout: 120_000, hookTimeout: 120_000 });

let model: Seq2SeqModel;
beforeAll(async () => {
  model = await loadModel('test/fixtures/tiny-seq2seq', { threads: 1 });
});
afterAll(async () => {
  await model.dispose();
});

const Q = 'to lf: which orchards does chen li own?';

describe('decode options: signal', () => {
  it('an already aborted signal stops every strategy before the encoder runs', async () => {
    for (const strategy of ['greedy', 'sample', 'beam'] as const) {
      const c = new AbortController();
      c.abort(new Error('stopped before it began'));
      await expect(decode(model, Q, { strategy, signal: c.signal })).rejects.toThrow('stopped before it began');
    }
  });

  it('aborting while streaming stops at the next step', async () => {
    const c = new AbortController();
    const seen: number[] = [];
    const run = async () => {
      for await (const t of decodeStream(model, Q, { maxTokens: 60, signal: c.signal })) {
        seen.push(t.id);
        if (t.index === 2) c.abort(new RangeError('enough'));
      }
    };
    await expect(run()).rejects.toThrow('enough');
    // three tokens were chosen; the fourth step was never taken
    expect(seen).toHaveLength(3);
    // the same decode without a signal runs longer: the stop came from the signal, not the output's end
    const full = await decode(model, Q, { maxTokens: 60 });
    expect(full.tokens.length).toBeGreaterThan(3);
    expect(full.tokens.slice(0, 3)).toEqual(seen);
  });

  it('a time limit through AbortSignal.timeout stops beam search and generate()', async () => {
    await expect(decode(model, Q, { strategy: 'beam', beamWidth: 4, maxTokens: 127, signal: AbortSignal.timeout(1) })).rejects.toMatchObject({ name: 'TimeoutError' });
    await expect(generate(model, Q, { maxTokens: 127, signal: AbortSignal.timeout(1) })).rejects.toMatchObject({ name: 'TimeoutError' });
  });
});
