/**
 * A small, honest TokenConstraint for decoder tests that do not depend on the grammar mask engine:
 * the output text (concatenated token bytes) must be exactly one of a finite list of strings.
 * States are immutable { prefix, alive targets }; writeAllowed enforces the budget with the fewest
 * tokens that can spell each target's remainder (a DP over the vocabulary), so a sequence is only
 * allowed to continue when a completion plus EOS still fits.
 */
import type { TokenConstraint } from '../../src/util/constraint.ts';
import type { Vocabulary } from '../../src/vocab/index.ts';

export interface ToyState {
  readonly prefix: string;
  readonly alive: readonly number[];
}

export class FiniteSetConstraint implements TokenConstraint<ToyState> {
  readonly vocabSize: number;
  readonly eosIds: readonly number[];
  private readonly texts: (string | null)[];
  /** fewest tokens spelling targets[t].slice(pos); Infinity when impossible */
  private readonly minTokens: number[][];

  constructor(
    vocab: Vocabulary,
    readonly targets: readonly string[],
  ) {
    this.vocabSize = vocab.vocabSize;
    this.eosIds = vocab.eosIds;
    this.texts = [];
    for (let id = 0; id < vocab.vocabSize; id++) this.texts.push(vocab.isNormal(id) ? vocab.text(id) : null);
    this.minTokens = targets.map((t) => {
      const best = new Array<number>(t.length + 1).fill(Infinity);
      best[t.length] = 0;
      for (let pos = t.length - 1; pos >= 0; pos--) {
        for (const s of this.texts) {
          if (s !== null && s.length > 0 && t.startsWith(s, pos)) best[pos] = Math.min(best[pos], 1 + best[pos + s.length]);
        }
      }
      return best;
    });
  }

  /** Fewest tokens that spell target `t` (EOS not counted). */
  fewestTokens(t: number): number {
    return this.minTokens[t][0];
  }

  start(): ToyState {
    return { prefix: '', alive: this.targets.map((_, i) => i) };
  }

  /** token ids allowed after `state` with `budget` tokens left (EOS included) */
  writeAllowed(state: ToyState, budget: number, mask: Uint32Array): void {
    mask.fill(0);
    if (budget < 1) return;
    if (this.isComplete(state)) for (const e of this.eosIds) mask[e >>> 5] |= 1 << (e & 31);
    for (let id = 0; id < this.texts.length; id++) {
      const s = this.texts[id];
      if (s === null) continue;
      const next = state.prefix + s;
      for (const t of state.alive) {
        const target = this.targets[t];
        if (target.startsWith(next) && 1 + this.minTokens[t][next.length] + 1 <= budget) {
          mask[id >>> 5] |= 1 << (id & 31);
          break;
        }
      }
    }
  }

  advance(state: ToyState, id: number): ToyState {
    const s = this.texts[id];
    if (s === null) throw new Error(`token ${id} is not program text`);
    const prefix = state.prefix + s;
    const alive = state.alive.filter((t) => this.targets[t].startsWith(prefix));
    if (alive.length === 0) throw new Error(`token ${id} (${JSON.stringify(s)}) is not allowed after ${JSON.stringify(state.prefix)}`);
    return { prefix, alive };
  }

  isComplete(state: ToyState): boolean {
    return state.alive.some((t) => this.targets[t] === state.prefix);
  }
}
