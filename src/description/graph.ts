/**
 * Strongly connected components of a small directed graph (Tarjan's algorithm, iterative so deep
 * chains do not overflow the call stack). Used by the whole-grammar analyses to close sets over
 * sort dependencies in one pass instead of rounds of a fixpoint.
 */

/**
 * The components of the graph with nodes 0..n-1 and successor lists `succ`, each as a list of
 * nodes. Components come out in reverse topological order: every component is listed after all
 * components reachable from it. Cost O(n + edges).
 */
export function stronglyConnected(n: number, succ: readonly (readonly number[])[]): number[][] {
  const index = new Int32Array(n).fill(-1);
  const low = new Int32Array(n);
  const onStack = new Uint8Array(n);
  const stack: number[] = [];
  const out: number[][] = [];
  let counter = 0;
  // explicit call stack of (node, next successor position)
  const callNode: number[] = [];
  const callPos: number[] = [];
  for (let root = 0; root < n; root++) {
    if (index[root] !== -1) continue;
    callNode.push(root);
    callPos.push(0);
    index[root] = low[root] = counter++;
    stack.push(root);
    onStack[root] = 1;
    while (callNode.length > 0) {
      const top = callNode.length - 1;
      const v = callNode[top]!;
      const edges = succ[v]!;
      const pos = callPos[top]!;
      if (pos < edges.length) {
        callPos[top] = pos + 1;
        const w = edges[pos]!;
        if (index[w] === -1) {
          index[w] = low[w] = counter++;
          stack.push(w);
          onStack[w] = 1;
          callNode.push(w);
          callPos.push(0);
        } else if (onStack[w]) {
          low[v] = Math.min(low[v]!, index[w]!);
        }
        continue;
      }
      callNode.pop();
      callPos.pop();
      if (callNode.length > 0) {
        const parent = callNode[callNode.length - 1]!;
        low[parent] = Math.min(low[parent]!, low[v]!);
      }
      if (low[v] === index[v]) {
        const comp: number[] = [];
        let w: number;
        do {
          w = stack.pop()!;
          onStack[w] = 0;
          comp.push(w);
        } while (w !== v);
        out.push(comp);
      }
    }
  }
  return out;
}
