/**
 * Nesting limits, one place for every stage that recurses over untrusted input.
 *
 * JavaScript has no tail calls and a fixed stack (about 1 MB on Node's main thread), so a stage
 * that recurses once per level of nesting fails with a RangeError somewhere between a few hundred
 * and a few thousand levels, depending on its frames. Each such stage checks one of these limits
 * first and refuses deeper input with a located error; the limits sit well below what was measured
 * to fit (figures beside each constant: Node 20, default stack, called from a test file).
 *
 * - `MAX_JSON_DEPTH`: arrays and objects nested inside each other in a JSON value — a request body,
 *   a tree file, a tree handed to the validator (and so to the printer and the executors). Measured
 *   capacity: the validator follows 1,250 levels, the printer 1,337, JSON.stringify 4,100.
 * - `MAX_PARSE_DEPTH`: grammar rules the parser follows at once (ohm-js evaluates one rule by a
 *   JavaScript call chain of several frames). The figure in levels of nesting depends on the
 *   grammar: README's "Limits" table gives it for the shipped grammars.
 *
 * `jsonDepthProblem` walks a value iteratively, so measuring never overflows itself.
 */
import { pathKey } from './json.ts';

/** Arrays/objects nested inside each other in one JSON value that any stage accepts. */
export const MAX_JSON_DEPTH = 500;

/** Grammar rules the parser follows at once (see the header). */
export const MAX_PARSE_DEPTH = 800;

/**
 * The JSON path of the first array or object nested more than `max` levels deep in `value` (the
 * outermost one is level 1), or null when there is none. Iterative: safe on any depth.
 */
export function jsonDepthProblem(value: unknown, max: number = MAX_JSON_DEPTH, base = '$'): string | null {
  if (value === null || typeof value !== 'object') return null;
  // depth-first with an explicit stack; paths are built only for the way down to the culprit
  const stack: { v: object; depth: number; parent: number; key: string | number | null }[] = [{ v: value, depth: 1, parent: -1, key: null }];
  const trail: { parent: number; key: string | number | null }[] = [];
  while (stack.length > 0) {
    const top = stack.pop()!;
    const id = trail.length;
    trail.push({ parent: top.parent, key: top.key });
    if (top.depth > max) {
      const keys: (string | number)[] = [];
      for (let i = id; i >= 0 && trail[i]!.key !== null; i = trail[i]!.parent) keys.push(trail[i]!.key!);
      let path = base;
      for (let k = keys.length - 1; k >= 0; k--) path = pathKey(path, keys[k]!);
      return path;
    }
    if (Array.isArray(top.v)) {
      for (let i = top.v.length - 1; i >= 0; i--) {
        const c: unknown = top.v[i];
        if (c !== null && typeof c === 'object') stack.push({ v: c, depth: top.depth + 1, parent: id, key: i });
      }
    } else {
      const keys = Object.keys(top.v);
      for (let i = keys.length - 1; i >= 0; i--) {
        const c: unknown = (top.v as Record<string, unknown>)[keys[i]!];
        if (c !== null && typeof c === 'object') stack.push({ v: c, depth: top.depth + 1, parent: id, key: keys[i]! });
      }
    }
  }
  return null;
}

/** The message every stage gives for a value nested deeper than `max`. */
export function tooDeepMessage(max: number = MAX_JSON_DEPTH): string {
  return `nested more than ${max} arrays/objects deep; expected at most ${max} (the nesting limit)`;
}
