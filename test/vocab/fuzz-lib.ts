/** The fuzzing pieces shared by fuzz.test.ts (and usable from a scratch script to hunt for more). */
import { readFileSync } from 'node:fs';
import { deserializeVocabulary, loadVocabulary, VocabularyError } from '../../src/vocab/index.ts';

export const SMALL = readFileSync('test/cases/vocab/unigram-fruit.json', 'utf8');
export const WORDPIECE = readFileSync('test/cases/vocab/wordpiece-fruit.json', 'utf8');

/** A small real file: the first `n` vocabulary entries and merges of a real tokenizer.json. */
export function shrinkReal(path: string, n: number): string {
  const j = JSON.parse(readFileSync(path, 'utf8'));
  const vocab = Object.entries(j.model.vocab as Record<string, number>).filter(([, id]) => id < n);
  j.model.vocab = Object.fromEntries(vocab);
  j.model.merges = (j.model.merges as unknown[]).slice(0, 50);
  j.added_tokens = (j.added_tokens as unknown[]).slice(0, 20);
  return JSON.stringify(j);
}

/** Outcome of loading one input: 'ok' or the error's location. Throws on any other exception. */
export function check(text: string, file: string): string {
  try {
    const v = loadVocabulary(text, { file, config: null });
    // Index invariants: offsets non-decreasing, trie consistent, round trip through the binary form.
    const t = v.trie;
    for (let id = 0; id < v.vocabSize; id++) {
      if (v.offsets[id + 1] < v.offsets[id]) throw new Error(`${file}: offsets decrease at ${id}`);
      if (v.isNormal(id) && t.depth[t.tokenNode[id]] !== v.length(id)) throw new Error(`${file}: trie node of ${id} has the wrong depth`);
    }
    const w = deserializeVocabulary(v.serialize(), 'fuzz.cache');
    if (Buffer.compare(w.bytes, v.bytes) !== 0 || w.vocabSize !== v.vocabSize) throw new Error(`${file}: binary round trip differs`);
    return 'ok';
  } catch (e) {
    if (!(e instanceof VocabularyError)) throw new Error(`${file}: not a VocabularyError: ${(e as Error)?.stack ?? e}`);
    if (e.file !== file || !e.message.startsWith(`${file}: `)) throw new Error(`${file}: error names another file: ${e.message}`);
    if (!/^(\$|\d+:\d+$)/.test(e.where)) throw new Error(`${file}: error has no JSON path or line:col: ${e.message}`);
    if (!/expected/.test(e.detail)) throw new Error(`${file}: error does not say what was expected: ${e.message}`);
    return e.where;
  }
}

type Json = unknown;
const WRONG: Json[] = [null, true, 0, -1, 1.5, 2 ** 40, '', 'x', '<0xZZ>', '<0x100>', [], {}, [1, 2], { type: 'Nope' }, 'A'.repeat(300)];

function allPaths(v: Json, path: (string | number)[] = [], out: (string | number)[][] = [], limit = 4000): (string | number)[][] {
  if (out.length >= limit) return out;
  out.push(path);
  if (Array.isArray(v)) v.forEach((x, i) => allPaths(x, [...path, i], out, limit));
  else if (v !== null && typeof v === 'object') for (const k of Object.keys(v)) allPaths((v as Record<string, Json>)[k], [...path, k], out, limit);
  return out;
}

export function mutate(base: string, r: () => number): string {
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];
  const op = Math.floor(r() * 10);
  if (op === 0) return base.slice(0, Math.floor(r() * base.length)); // truncated
  if (op === 1) {
    const i = Math.floor(r() * base.length);
    return base.slice(0, i) + pick(['{', '}', ',', '"', ':', ']', '\\', '\n', 'x', '\u0001']) + base.slice(i + 1);
  }
  const j = JSON.parse(base);
  const paths = allPaths(j).filter((p) => p.length > 0);
  const n = 1 + Math.floor(r() * 3);
  for (let k = 0; k < n; k++) {
    const p = op === 2 ? pick([['model', 'type'], ['model', 'vocab'], ['decoder'], ['added_tokens'], ['model'], ['decoder', 'type'], ['model', 'unk_id']]) : pick(paths);
    let parent: any = j;
    for (const key of p.slice(0, -1)) parent = parent?.[key];
    if (parent === null || typeof parent !== 'object') continue;
    const last = p[p.length - 1];
    const kind = op === 3 ? 0 : Math.floor(r() * 5);
    if (kind === 0) delete parent[last];
    else if (kind === 1 || kind === 2) parent[last] = pick(WRONG);
    else if (kind === 3 && typeof parent[last] === 'number') parent[last] = pick([0, 1, 3, 2 ** 22, 2 ** 31, 4e9, -3, 0.5]); // duplicate / huge ids
    else if (kind === 3 && typeof parent[last] === 'string') parent[last] = pick(['<0x41>', '<0xG1>', '<0x>', '▁▁', '', '<unk>', '</s>']); // byte tokens, dup pieces
    else parent[last] = pick(WRONG);
  }
  if (op === 4 && (j as any).model !== null && typeof (j as any).model === 'object') (j as any).model.type = pick(['BPE', 'Unigram', 'WordPiece', 'WordLevel', 'Nope']); // model type / vocab shape mismatch
  if (op === 5) (j as any).decoder = pick([null, { type: 'CTC' }, { type: 'Sequence', decoders: [{ type: 'Replace', pattern: { Regex: ' +' }, content: ' ' }] }, { type: 'Metaspace', prepend_scheme: 'sometimes' }, { type: 'Strip', content: ' ', start: 2, stop: 1 }]);
  return JSON.stringify(j, null, r() < 0.5 ? 1 : undefined);
}

