/**
 * MaskConstraint.previous undoes one advance: states are persistent (src/util/constraint.ts), so
 * the state before a token is the very object the caller had, for every step of a walk along
 * allowed tokens, after the end-of-sequence token too; the start state is its own previous state.
 */
import { describe, expect, it } from 'vitest';
import { compileMasks } from '../../src/masks/index.ts';
import { grammar, namesFor, rng, vocabulary } from './helpers.ts';

describe('MaskConstraint.previous', () => {
  it('gives back the state before each advance, along random walks of allowed tokens', () => {
    const v = vocabulary('coop');
    const c = compileMasks(grammar('arith'), v).bind(namesFor('arith'));
    const mask = new Uint32Array(Math.ceil(v.vocabSize / 32));
    const random = rng(7);
    const start = c.start();
    expect(c.previous(start)).toBe(start);
    for (let walk = 0; walk < 20; walk++) {
      let s = start;
      for (let step = 0; step < 40; step++) {
        c.writeAllowed(s, 64 - step, mask);
        const ids: number[] = [];
        for (let id = 0; id < v.vocabSize; id++) if ((mask[id >>> 5]! >>> (id & 31)) & 1) ids.push(id);
        expect(ids.length, `walk ${walk} step ${step}`).toBeGreaterThan(0);
        const id = ids[Math.floor(random() * ids.length)]!;
        const next = c.advance(s, id);
        expect(c.previous(next)).toBe(s);
        if (v.eosIds.includes(id)) {
          expect(c.isComplete(next)).toBe(true);
          expect(c.isComplete(c.previous(next))).toBe(true);
          break;
        }
        s = next;
      }
    }
  });
});
