/**
 * The source tree's import rules, read from the files themselves (every static `import … from`,
 * `export … from` and dynamic `import('…')` of a relative path, type-only ones included):
 *
 * 1. Data flows forward through the pipeline stages (src/<stage>/). A file may import its own stage
 *    and stages of a LOWER level only; stages on one level are independent branches and do not
 *    import each other. The levels, from src/ (what each stage consumes → produces):
 *      0 util         ids, bitsets, source positions, JSON paths, the seeded PRNG
 *      1 description  description file → grammar IR
 *      2 from-schema  JSON Schema → description text
 *        tree         grammar IR → JSON trees, validation, printer, parser, sampler
 *        automaton    grammar IR → pushdown automaton
 *        vocab        tokenizer.json → token byte strings, trie
 *      3 masks        automaton × vocabulary → token masks
 *        model        ONNX seq2seq runtime (uses vocab for its tokenizer)
 *      4 decode       model × masks → constrained search
 *      5 exec         trees → answers (SQLite, logical forms)
 *      6 eval         decode + exec → metrics and reports
 *        dataset      tree sampler + exec's demo lexicon → training data
 *      7 server       entry point (HTTP)
 *        queue        evaluation jobs over a Redis queue (eval's runs, spread over workers)
 *      8 cli          entry point (command line)
 *      9 index.ts     the library's public API
 * 2. No import cycle between files (a type-only cycle counts too: it ties the files' layouts).
 * 3. An `internal.ts` is imported only by its own stage and the stage named beside it here.
 */
import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync } from 'node:fs';
import { dirname, join, normalize, relative } from 'node:path';

const LEVELS: readonly (readonly string[])[] = [
  ['util'],
  ['description'],
  ['from-schema', 'tree', 'automaton', 'vocab'],
  ['masks', 'model'],
  ['decode'],
  ['exec'],
  ['eval', 'dataset'],
  ['server', 'queue'],
  ['cli'],
  ['index.ts'],
];
/** internal.ts of a stage → the other stages allowed to import it */
const INTERNAL_USERS: Record<string, readonly string[]> = { automaton: ['masks'] };

const SRC = 'src';
const level = new Map<string, number>();
LEVELS.forEach((names, i) => names.forEach((n) => level.set(n, i)));

function sourceFiles(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((e) => {
    const p = join(dir, e.name);
    if (e.isDirectory()) return sourceFiles(p);
    return /\.(ts|mts|mjs|js)$/.test(e.name) && !p.startsWith(join(SRC, 'server', 'page')) ? [p] : [];
  });
}

/** Relative import targets of a file, as normalised paths (comments stripped first). */
function importsOf(file: string): string[] {
  const text = readFileSync(file, 'utf8').replace(/\/\*[\s\S]*?\*\//g, '').replace(/^\s*\/\/.*$/gm, '');
  const out: string[] = [];
  for (const m of text.matchAll(/\b(?:from|import)\s*\(?\s*['"](\.{1,2}\/[^'"]+)['"]/g)) out.push(normalize(join(dirname(file), m[1])));
  return out;
}

const stageOf = (file: string): string => relative(SRC, file).split(/[\\/]/)[0];
const files = sourceFiles(SRC);
const graph = new Map(files.map((f) => [f, importsOf(f)]));

describe('source layout', () => {
  it('every stage folder in src/ has a level (a new stage must be placed in the pipeline order above)', () => {
    const stages = new Set(files.map(stageOf));
    expect([...stages].filter((s) => !level.has(s))).toEqual([]);
  });

  it('imports point forward only: to the own stage or a lower level', () => {
    const wrong: string[] = [];
    for (const [file, targets] of graph) {
      const from = stageOf(file);
      for (const target of targets) {
        const to = stageOf(target);
        if (to === from) continue;
        if (!(level.get(to)! < level.get(from)!)) wrong.push(`${file} → ${target} (${from} is level ${level.get(from)}, ${to} is level ${level.get(to)})`);
      }
    }
    expect(wrong).toEqual([]);
  });

  it('an internal.ts is imported only by its own stage and the stages allowed to', () => {
    const wrong: string[] = [];
    for (const [file, targets] of graph) {
      for (const target of targets) {
        if (!/[\\/]internal\.ts$/.test(target)) continue;
        const owner = stageOf(target);
        const from = stageOf(file);
        if (from !== owner && !(INTERNAL_USERS[owner] ?? []).includes(from)) wrong.push(`${file} → ${target}`);
      }
    }
    expect(wrong).toEqual([]);
  });

  it('no import cycle between files (Tarjan strongly connected components)', () => {
    let counter = 0;
    const index = new Map<string, number>();
    const low = new Map<string, number>();
    const stack: string[] = [];
    const onStack = new Set<string>();
    const cycles: string[][] = [];
    const visit = (v: string): void => {
      index.set(v, counter);
      low.set(v, counter++);
      stack.push(v);
      onStack.add(v);
      for (const w of graph.get(v) ?? []) {
        if (!graph.has(w)) continue;
        if (!index.has(w)) {
          visit(w);
          low.set(v, Math.min(low.get(v)!, low.get(w)!));
        } else if (onStack.has(w)) low.set(v, Math.min(low.get(v)!, index.get(w)!));
      }
      if (low.get(v) === index.get(v)) {
        const scc: string[] = [];
        let w: string;
        do {
          w = stack.pop()!;
          onStack.delete(w);
          scc.push(w);
        } while (w !== v);
        if (scc.length > 1 || (graph.get(v) ?? []).includes(v)) cycles.push(scc.sort());
      }
    };
    for (const f of graph.keys()) if (!index.has(f)) visit(f);
    expect(cycles).toEqual([]);
  });

  it('the checker sees the imports it is meant to see (a known forward import and a known dynamic one)', () => {
    expect(graph.get(join(SRC, 'masks', 'index.ts'))?.some((t) => stageOf(t) === 'masks')).toBe(true);
    expect(graph.get(join(SRC, 'cli', 'commands', 'serve.ts'))).toContain(join(SRC, 'server', 'index.ts'));
  });
});
