/**
 * The token trie: every normal token's byte string in one prefix tree, stored flat.
 *
 * Layout (invariants hold for every trie this file builds or deserialises):
 * - Nodes are numbered in depth-first preorder; node 0 is the root (the empty string, depth 0).
 *   Children of a node are in increasing byte order.
 * - `end[n]` is one past the last node of n's subtree, so the subtree of n is the node range
 *   [n, end[n]). The first child of n is n + 1 when n + 1 < end[n]; the next sibling of a child c is
 *   end[c] when end[c] < end[parent]. A mask walk is therefore a linear scan that jumps to `end[n]`
 *   when the automaton rejects the byte of node n.
 * - `byte[n]` is the byte on the edge into n (0 for the root); `depth[n]` is the string length.
 * - `tokens` lists token ids grouped by node in preorder: the ids whose string ends exactly at n
 *   are tokens[tokStart[n] .. tokStart[n + 1]), and the ids in n's whole subtree are
 *   tokens[tokStart[n] .. tokStart[end[n]]). Several ids may share one string.
 * - `tokenNode[id]` is the node where token id ends, or NO_NODE for ids not in the trie (special,
 *   absent, or empty tokens).
 */
export const NO_NODE = 0xffffffff;

export class TokenTrie {
  constructor(
    readonly nodeCount: number,
    readonly byte: Uint8Array,
    readonly depth: Uint32Array,
    readonly end: Uint32Array,
    readonly tokStart: Uint32Array,
    readonly tokens: Uint32Array,
    readonly tokenNode: Uint32Array,
  ) {}

  /** The child of `node` along `b`, or NO_NODE. Scans the (sorted) children. */
  child(node: number, b: number): number {
    const stop = this.end[node];
    let c = node + 1;
    while (c < stop) {
      const cb = this.byte[c];
      if (cb === b) return c;
      if (cb > b) return NO_NODE;
      c = this.end[c];
    }
    return NO_NODE;
  }

  /** The node spelling `bytes`, or NO_NODE. */
  find(bytes: ArrayLike<number>): number {
    let n = 0;
    for (let i = 0; i < bytes.length && n !== NO_NODE; i++) n = this.child(n, bytes[i]);
    return n;
  }

  /** Ids whose string ends exactly at `node` (a view; allocates the view object). */
  tokensAt(node: number): Uint32Array {
    return this.tokens.subarray(this.tokStart[node], this.tokStart[node + 1]);
  }

  /** Ids in the subtree of `node` (every token having the node's string as a prefix). */
  subtreeTokens(node: number): Uint32Array {
    return this.tokens.subarray(this.tokStart[node], this.tokStart[this.end[node]]);
  }

  /** Number of children of `node`. */
  childCount(node: number): number {
    let k = 0;
    for (let c = node + 1, stop = this.end[node]; c < stop; c = this.end[c]) k++;
    return k;
  }
}

/**
 * Builds the trie over the ids `included(id)` accepts, from the flat byte store.
 * Cost: an MSD radix partition of the ids by their bytes, O(total bytes + 256 × branching nodes
 * with many tokens); a node with a single token below it costs one step per byte.
 */
export function buildTrie(
  vocabSize: number,
  bytes: Uint8Array,
  offsets: Uint32Array,
  included: (id: number) => boolean,
): TokenTrie {
  let n = 0;
  let cap = 1;
  const order = new Uint32Array(vocabSize);
  for (let id = 0; id < vocabSize; id++) {
    const len = offsets[id + 1] - offsets[id];
    if (len > 0 && included(id)) {
      order[n++] = id;
      cap += len;
    }
  }
  // Node count is at most 1 + total bytes of the included tokens; allocate that, trim at the end.
  const byte = new Uint8Array(cap);
  const depth = new Uint32Array(cap);
  const end = new Uint32Array(cap);
  const tokStart = new Uint32Array(cap + 1);
  const tokens = new Uint32Array(n);
  const tokenNode = new Uint32Array(vocabSize).fill(NO_NODE);
  const tmp = new Uint32Array(n);
  const counts = new Uint32Array(257);
  let nodeCount = 0;
  let t = 0;
  const chain: number[] = [];

  const key = (id: number, d: number): number => bytes[offsets[id] + d];

  // Builds the subtree for order[lo, hi): all share their first d bytes; the node for that prefix
  // is created here with edge byte `b`.
  const build = (lo: number, hi: number, d: number, b: number): void => {
    const chainStart = chain.length;
    for (;;) {
      const node = nodeCount++;
      byte[node] = b;
      depth[node] = d;
      tokStart[node] = t;
      chain.push(node);
      // Terminals (length d) first, in id order; the rest keep their order behind them.
      let k = lo;
      let m = 0;
      for (let i = lo; i < hi; i++) {
        const id = order[i];
        if (offsets[id + 1] - offsets[id] === d) {
          order[k++] = id;
          tokens[t++] = id;
          tokenNode[id] = node;
        } else tmp[m++] = id;
      }
      for (let i = 0; i < m; i++) order[k + i] = tmp[i];
      lo = k;
      if (lo === hi) break;
      const r = hi - lo;
      if (r === 1) {
        // One token below: a plain chain of nodes.
        const id = order[lo];
        const len = offsets[id + 1] - offsets[id];
        for (let dd = d; dd < len; dd++) {
          const c = nodeCount++;
          byte[c] = key(id, dd);
          depth[c] = dd + 1;
          tokStart[c] = t;
          chain.push(c);
        }
        tokens[t++] = id;
        tokenNode[id] = nodeCount - 1;
        break;
      }
      // Stable sort of order[lo, hi) by the byte at d.
      if (r <= 24) {
        for (let i = lo + 1; i < hi; i++) {
          const id = order[i];
          const kb = key(id, d);
          let j = i - 1;
          while (j >= lo && key(order[j], d) > kb) {
            order[j + 1] = order[j];
            j--;
          }
          order[j + 1] = id;
        }
      } else {
        counts.fill(0);
        for (let i = lo; i < hi; i++) counts[key(order[i], d) + 1]++;
        for (let v = 1; v < 257; v++) counts[v] += counts[v - 1];
        for (let i = lo; i < hi; i++) {
          const id = order[i];
          tmp[counts[key(id, d)]++] = id;
        }
        for (let i = 0; i < r; i++) order[lo + i] = tmp[i];
      }
      const first = key(order[lo], d);
      if (key(order[hi - 1], d) === first) {
        // A single child: continue the chain without recursion.
        b = first;
        d++;
        continue;
      }
      let i = lo;
      while (i < hi) {
        const kb = key(order[i], d);
        let j = i + 1;
        while (j < hi && key(order[j], d) === kb) j++;
        build(i, j, d + 1, kb);
        i = j;
      }
      break;
    }
    while (chain.length > chainStart) end[chain.pop()!] = nodeCount;
  };
  build(0, n, 0, 0);
  tokStart[nodeCount] = t;
  return new TokenTrie(
    nodeCount,
    byte.slice(0, nodeCount),
    depth.slice(0, nodeCount),
    end.slice(0, nodeCount),
    tokStart.slice(0, nodeCount + 1),
    tokens,
    tokenNode,
  );
}
