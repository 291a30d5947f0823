/**
 * Heap allocation of the decoding loop, for the bench (`treewright bench`): bytes allocated per
 * `writeAllowed` and per `advance` of a TokenConstraint along decoding paths (token id lists).
 *
 * Method: V8's used-heap size before and after each batch — all masks of one path, then all its
 * advances, each batch from states computed beforehand — plus what every garbage collection in
 * between freed (v8.GCProfiler reports the heap before and after each collection), minus the cost
 * of measuring an empty batch. That counts every object on the V8 heap (threads, frames, strings,
 * small typed arrays); the backing stores of large typed arrays live outside it and are not
 * counted. Kept masks computed on first use are allocations too: warm the constraint up first.
 */
import v8 from 'node:v8';
import type { TokenConstraint } from '../util/constraint.ts';

export interface AllocationFigures {
  /** mean bytes allocated per `writeAllowed` */
  readonly maskBytes: number;
  /** mean bytes allocated per `advance` */
  readonly advanceBytes: number;
  /** masks (and advances) measured */
  readonly steps: number;
}

const used = (): number => v8.getHeapStatistics().used_heap_size;

/** Bytes allocated while `run()` runs, collections included (see the module comment). */
function allocated(run: () => void): number {
  const profiler = new v8.GCProfiler();
  profiler.start();
  const before = used();
  run();
  const after = used();
  const report = profiler.stop();
  let freed = 0;
  for (const s of report.statistics) freed += s.beforeGC.heapStatistics.usedHeapSize - s.afterGC.heapStatistics.usedHeapSize;
  return after - before + freed;
}

/**
 * Allocation per mask and per advance along `paths` (each a token id list the constraint accepts
 * from its start state), with budget `maxLen − step` as the bench uses.
 */
export function measureAllocation<S>(c: TokenConstraint<S>, paths: readonly (readonly number[])[], maxLen: number): AllocationFigures {
  const mask = new Uint32Array((c.vocabSize + 31) >>> 5);
  const overheads: number[] = [];
  for (let i = 0; i < 16; i++) overheads.push(allocated(() => {}));
  overheads.sort((a, b) => a - b);
  const overhead = overheads[overheads.length >> 1];
  let maskBytes = 0;
  let advanceBytes = 0;
  let steps = 0;
  for (const ids of paths) {
    const states: S[] = [];
    let s = c.start();
    for (let i = 0; i < ids.length; i++) {
      states.push(s);
      s = c.advance(s, ids[i]);
    }
    const m = Math.max(0, allocated(() => {
      for (let i = 0; i < ids.length; i++) c.writeAllowed(states[i], maxLen - i, mask);
    }) - overhead);
    const a = Math.max(0, allocated(() => {
      for (let i = 0; i < ids.length; i++) c.advance(states[i], ids[i]);
    }) - overhead);
    maskBytes += m;
    advanceBytes += a;
    steps += ids.length;
  }
  return { maskBytes: steps === 0 ? 0 : maskBytes / steps, advanceBytes: steps === 0 ? 0 : advanceBytes / steps, steps };
}
