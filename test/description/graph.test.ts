import { describe, expect, it } from 'vitest';
import { stronglyConnected } from '../../src/description/graph.ts';

const sorted = (cs: number[][]) => cs.map((c) => [...c].sort((a, b) => a - b));

describe('stronglyConnected', () => {
  it('finds components in reverse topological order', () => {
    // 0 -> 1 -> 2 -> 0 is a cycle; 2 -> 3; 3 -> 4 -> 3 is a cycle; 5 alone points at 0
    // (definition of strongly connected components: common practice, no source)
    const succ = [[1], [2], [0, 3], [4], [3], [0]];
    expect(sorted(stronglyConnected(6, succ))).toEqual([[3, 4], [0, 1, 2], [5]]);
  });

  it('handles self-loops and isolated nodes', () => {
    expect(sorted(stronglyConnected(3, [[0], [], [1]]))).toEqual([[0], [1], [2]]);
  });

  it('does not overflow the call stack on a long chain', () => {
    const n = 200_000;
    const succ = Array.from({ length: n }, (_, i) => (i + 1 < n ? [i + 1] : []));
    const comps = stronglyConnected(n, succ);
    expect(comps.length).toBe(n);
    expect(comps[0]).toEqual([n - 1]);
    expect(comps[n - 1]).toEqual([0]);
  });
});
