/**
 * The last steps of the byte automaton: trim (states that cannot reach acceptance become the dead
 * state), Hopcroft minimisation over byte classes, renumbering (dead 0, start 1, then breadth
 * first), and the distances to acceptance the masks' length budget reads.
 */
/** An immutable byte DFA. `trans[s * 256 + b]` is the next state; 0 is dead. Plain data. */
export interface ByteDfa {
  readonly stateCount: number;
  readonly start: number;
  readonly trans: Int32Array;
  readonly accept: Uint8Array;
  /** Fewest bytes from the state to an accepting state (0 when accepting; unused for state 0). */
  readonly minAccept: Int32Array;
  /** A shortest accepted string (bytes), or null when the language is empty. */
  readonly shortest: Uint8Array | null;
}

/** Mutable byte DFA under construction (state 0 reserved for dead). */
export interface RawDfa {
  trans: number[]; // n * 256
  accept: boolean[];
  start: number;
}

/** Trims states that cannot reach acceptance, minimises (Hopcroft), renumbers (dead 0, start 1). */
export function finish(d: RawDfa): ByteDfa {
  const n = d.accept.length;
  const rev: number[][] = Array.from({ length: n }, () => []);
  for (let s = 1; s < n; s++) {
    let prev = 0;
    for (let b = 0; b < 256; b++) {
      const t = d.trans[s * 256 + b]!;
      if (t !== 0 && t !== prev) rev[t]!.push(s); // one entry per run of equal targets
      prev = t;
    }
  }
  const live = new Uint8Array(n);
  const stack: number[] = [];
  for (let s = 1; s < n; s++) if (d.accept[s]) {
    live[s] = 1;
    stack.push(s);
  }
  while (stack.length) {
    const t = stack.pop()!;
    for (const s of rev[t]!) if (!live[s]) {
      live[s] = 1;
      stack.push(s);
    }
  }
  if (!live[d.start]) return withDistances(1, new Int32Array(256), new Uint8Array(1));
  // live states reachable from the start; everything else is the dead state
  const reach = new Uint8Array(n);
  reach[d.start] = 1;
  stack.push(d.start);
  while (stack.length) {
    const s = stack.pop()!;
    for (let b = 0; b < 256; b++) {
      const t = d.trans[s * 256 + b]!;
      if (t !== 0 && live[t] && !reach[t]) {
        reach[t] = 1;
        stack.push(t);
      }
    }
  }
  const states: number[] = [0];
  for (let s = 1; s < n; s++) if (reach[s]) states.push(s);
  const local = new Int32Array(n).fill(0); // original → compact index (0 = dead)
  states.forEach((s, i) => (local[s] = i));
  const m = states.length;
  // byte classes: maximal runs of bytes on which every state moves alike (a valid partition for
  // minimisation, not necessarily the coarsest)
  const boundary = new Uint8Array(256);
  boundary[0] = 1;
  for (let i = 1; i < m; i++) {
    const row = states[i]! * 256;
    for (let b = 1; b < 256; b++) if (!boundary[b] && d.trans[row + b] !== d.trans[row + b - 1]) boundary[b] = 1;
  }
  const byteClass = new Int32Array(256);
  const classRep: number[] = [];
  for (let b = 0; b < 256; b++) {
    if (boundary[b]) classRep.push(b);
    byteClass[b] = classRep.length - 1;
  }
  const k = classRep.length;
  const delta = new Int32Array(m * k);
  for (let i = 1; i < m; i++) for (let c = 0; c < k; c++) {
    const t = d.trans[states[i]! * 256 + classRep[c]!]!;
    delta[i * k + c] = t !== 0 && reach[t] ? local[t]! : 0;
  }
  const block = hopcroft(m, k, delta, (i) => i !== 0 && d.accept[states[i]!]!);
  // renumber blocks: dead block 0, start block 1, then BFS
  const newId = new Int32Array(m).fill(-1); // by block
  const repOf = new Int32Array(m).fill(-1);
  for (let i = 0; i < m; i++) if (repOf[block[i]!]! < 0) repOf[block[i]!] = i;
  newId[block[0]!] = 0;
  const order: number[] = [block[local[d.start]!]!];
  newId[order[0]!] = 1;
  for (let q = 0; q < order.length; q++) {
    const i = repOf[order[q]!]!;
    for (let c = 0; c < k; c++) {
      const bl = block[delta[i * k + c]!]!;
      if (newId[bl]! < 0) {
        newId[bl] = order.length + 1;
        order.push(bl);
      }
    }
  }
  const count = order.length + 1;
  const trans = new Int32Array(count * 256);
  const accept = new Uint8Array(count);
  for (let q = 0; q < order.length; q++) {
    const i = repOf[order[q]!]!;
    accept[q + 1] = d.accept[states[i]!] ? 1 : 0;
    for (let b = 0; b < 256; b++) trans[(q + 1) * 256 + b] = newId[block[delta[i * k + byteClass[b]!]!]!]!;
  }
  return withDistances(count, trans, accept);
}

/**
 * Hopcroft's partition refinement (common practice, no source): the coarsest partition of states
 * 0..m-1 compatible with acceptance and with `delta` (m × k, state 0 the dead sink). Returns the
 * block of each state. O(k · m log m).
 */
function hopcroft(m: number, k: number, delta: Int32Array, accepting: (i: number) => boolean): Int32Array {
  // inverse transitions per class: for class c and target t, the sources
  const invStart = new Int32Array(k * m + 1);
  for (let i = 0; i < m; i++) for (let c = 0; c < k; c++) invStart[c * m + delta[i * k + c]! + 1]!++;
  for (let x = 0; x < k * m; x++) invStart[x + 1]! += invStart[x]!;
  const inv = new Int32Array(m * k);
  const fill = invStart.slice(0, k * m);
  for (let i = 0; i < m; i++) for (let c = 0; c < k; c++) inv[fill[c * m + delta[i * k + c]!]!++] = i;
  // partition as an array of elements grouped by block
  const elems = new Int32Array(m);
  const pos = new Int32Array(m);
  const block = new Int32Array(m);
  const bStart: number[] = [];
  const bEnd: number[] = [];
  let acc = 0;
  for (let i = 0; i < m; i++) if (accepting(i)) elems[acc++] = i;
  let p = acc;
  for (let i = 0; i < m; i++) if (!accepting(i)) elems[p++] = i;
  const blocks: Array<[number, number]> = [];
  if (acc > 0) blocks.push([0, acc]);
  if (acc < m) blocks.push([acc, m]);
  blocks.forEach(([s, e], b) => {
    bStart.push(s);
    bEnd.push(e);
    for (let x = s; x < e; x++) block[elems[x]!] = b;
  });
  for (let x = 0; x < m; x++) pos[elems[x]!] = x;
  const work: Array<[number, number]> = [];
  const inWork = new Set<number>(); // b * k + c
  for (let b = 0; b < bStart.length; b++) for (let c = 0; c < k; c++) {
    work.push([b, c]);
    inWork.add(b * k + c);
  }
  const marked = new Int32Array(m); // per block: count of marked elements (moved to the front)
  const touched: number[] = [];
  while (work.length > 0) {
    const [a, c] = work.pop()!;
    inWork.delete(a * k + c);
    // the splitter's members, copied (the block may change while we mark)
    const members: number[] = [];
    for (let x = bStart[a]!; x < bEnd[a]!; x++) members.push(elems[x]!);
    for (const t of members) {
      for (let y = invStart[c * m + t]!; y < invStart[c * m + t + 1]!; y++) {
        const s = inv[y]!;
        const b = block[s]!;
        const front = bStart[b]! + marked[b]!;
        if (pos[s]! < front) continue; // already marked
        if (marked[b] === 0) touched.push(b);
        // swap s to the front of its block's unmarked part
        const other = elems[front]!;
        elems[front] = s;
        elems[pos[s]!] = other;
        pos[other] = pos[s]!;
        pos[s] = front;
        marked[b]!++;
      }
    }
    for (const b of touched) {
      const cnt = marked[b]!;
      marked[b] = 0;
      const size = bEnd[b]! - bStart[b]!;
      if (cnt === size) continue;
      // split: marked part [start, start+cnt) becomes a new block
      const nb = bStart.length;
      bStart.push(bStart[b]!);
      bEnd.push(bStart[b]! + cnt);
      bStart[b] = bStart[b]! + cnt;
      for (let x = bStart[nb]!; x < bEnd[nb]!; x++) block[elems[x]!] = nb;
      for (let cc = 0; cc < k; cc++) {
        if (inWork.has(b * k + cc)) {
          work.push([nb, cc]);
          inWork.add(nb * k + cc);
        } else {
          const smaller = cnt <= size - cnt ? nb : b;
          work.push([smaller, cc]);
          inWork.add(smaller * k + cc);
        }
      }
    }
    touched.length = 0;
  }
  return block;
}

/** Adds minAccept and a shortest accepted string to a numbered DFA (breadth-first, backwards). */
export function withDistances(count: number, trans: Int32Array, accept: Uint8Array): ByteDfa {
  const minAccept = new Int32Array(count).fill(0x3fffffff);
  const nextByte = new Int32Array(count).fill(-1);
  const rev: number[][] = Array.from({ length: count }, () => []);
  for (let s = 1; s < count; s++) {
    let prev = -1;
    for (let b = 0; b < 256; b++) {
      const t = trans[s * 256 + b]!;
      if (t !== 0 && t !== prev) rev[t]!.push(s * 256 + b); // one edge per run of equal targets is enough
      prev = t;
    }
  }
  const queue: number[] = [];
  for (let s = 1; s < count; s++) if (accept[s]) {
    minAccept[s] = 0;
    queue.push(s);
  }
  for (let q = 0; q < queue.length; q++) {
    const t = queue[q]!;
    for (const sb of rev[t]!) {
      const s = sb >> 8;
      if (minAccept[s]! > minAccept[t]! + 1) {
        minAccept[s] = minAccept[t]! + 1;
        nextByte[s] = sb & 255;
        queue.push(s);
      }
    }
  }
  let shortest: Uint8Array | null = null;
  if (count > 1) {
    const out: number[] = [];
    let s = 1;
    while (!accept[s]) {
      out.push(nextByte[s]!);
      s = trans[s * 256 + nextByte[s]!]!;
    }
    shortest = Uint8Array.from(out);
  }
  return { stateCount: count, start: count > 1 ? 1 : 0, trans, accept, minAccept, shortest };
}

