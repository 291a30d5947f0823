/**
 * The mask cache: compiled grammar × vocabulary index in one file, keyed by both content hashes.
 *
 * Key: sha256 of (format, the description text, the tokenizer.json bytes, the tokenizer_config.json
 * bytes beside it if any). File: `<dir>/<key>.twmask` in a private per-user folder (default
 * `$XDG_CACHE_HOME/treewright/masks`; how files are created, read and sealed: cache-files.ts).
 *
 * Layout (little-endian; every section starts on a 4-byte boundary):
 *   CACHE_FORMAT ("TWMASK03")       magic (8 bytes)
 *   u32 headerLength, header JSON   {format, key, grammarHash, vocabBytes, bitsets, classes: [null | {states, kmax[], exits[]}], dfas}
 *   vocabulary index                Vocabulary.serialize() (its own checksum)
 *   the class DFAs                  per class: transitions, distances, accept flags (u32)
 *   the distinct bitsets            `bitsets` of ⌈V/32⌉ words each (equal tables are stored once)
 *   per class with tables: the bitset number of inside[d] for states 1..W0, then of each le level
 *   (kmax[d] capped at MAX_LE per state, in state order), then the exit node lists (u32)
 *   sha256 of everything above except the vocabulary section (it has its own)  (32 bytes)
 * The automaton itself is rebuilt from the description (milliseconds); per-binding local masks
 * are not cached (computed on first use, ~0.1 s for the shipped grammars).
 * On disk the file is followed by an HMAC-SHA256 seal under the folder's secret (cache-files.ts).
 * Loading treats the content as untrusted even when sealed: every table is bounds-checked against
 * the vocabulary and the DFAs it claims (ids below the vocabulary size, no bits past it, states in
 * range). A damaged or foreign file is reported (CacheError) and rebuilt by `loadOrCompile`.
 */
import { createHash } from 'node:crypto';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import type { Grammar } from '../description/ir.ts';
import { deserializeVocabulary, loadVocabulary, VocabularyError, type Vocabulary } from '../vocab/index.ts';
import { MaskEngine } from './engine.ts';
import { MAX_LE, type ClassTables } from './class-tables.ts';
import { Automaton, type ByteDfa } from '../automaton/internal.ts';
import { CacheFileError, defaultCacheDir, folderSecret, privateDir, readSealed, writeSealed } from './cache-files.ts';

export const CACHE_FORMAT = 'TWMASK03'; // 02: token DFAs from the regex front-end (case folding per ECMAScript, surrogate pairs); 03: equal bitsets stored once
const MAGIC = Buffer.from(CACHE_FORMAT, 'latin1');

export class CacheError extends Error {}

export { defaultCacheDir };

/** The cache key of a description text and a tokenizer file (plus its tokenizer_config.json). */
export function cacheKey(grammarText: string, tokenizerPath: string): string {
  const h = createHash('sha256');
  h.update(CACHE_FORMAT).update('\0').update(grammarText).update('\0');
  h.update(readFileSync(tokenizerPath)).update('\0');
  const config = join(dirname(tokenizerPath), 'tokenizer_config.json');
  if (existsSync(config)) h.update(readFileSync(config));
  return h.digest('hex');
}

/** Most DFA states a cache file may declare (the regex compiler's own bound is far lower). */
const MAX_STATES = 1 << 20;

function isCount(x: unknown, min: number, max: number): x is number {
  return typeof x === 'number' && Number.isInteger(x) && x >= min && x <= max;
}

function pad4(n: number): number {
  return (4 - (n & 3)) & 3;
}

/** Serialises an engine (vocabulary index + class tables) under `key`. */
export function serializeEngine(engine: MaskEngine, key: string): Buffer {
  const parts: Buffer[] = [];
  const classes = engine.classes.map((t) => (t === null ? null : { states: t.w0, kmax: Array.from(t.kmax), exits: t.exits.map((e) => e.length) }));
  // the class DFAs (so loading skips regex compilation), by class index
  const dfas = engine.grammar.tokens.map((tc) => engine.automaton.rtn.terminals.find((x) => x.tokenClass === tc.index && x.kind !== 'lit')?.dfa ?? null);
  const dfaInfo = dfas.map((d) => (d === null ? null : { states: d.stateCount, start: d.start, shortest: d.shortest === null ? null : Array.from(d.shortest) }));
  const vocabBlob = Buffer.from(engine.vocab.serialize());
  // distinct bitsets by identity (the builder interned equal ones; a loaded engine shares views)
  const pool = new Map<Uint32Array, number>();
  const number = (b: Uint32Array) => {
    let i = pool.get(b);
    if (i === undefined) pool.set(b, (i = pool.size));
    return i;
  };
  const refs = engine.classes.map((t) => {
    if (t === null) return null;
    const ids: number[] = [];
    for (let d = 1; d <= t.w0; d++) ids.push(number(t.inside[d]));
    for (let d = 1; d <= t.w0; d++) for (const b of t.le[d]) ids.push(number(b));
    return Uint32Array.from(ids);
  });
  const header = Buffer.from(JSON.stringify({ format: CACHE_FORMAT, key, grammarHash: engine.grammar.hash, vocabBytes: vocabBlob.length, bitsets: pool.size, classes, dfas: dfaInfo }), 'utf8');
  const len = Buffer.alloc(4);
  len.writeUInt32LE(header.length);
  parts.push(MAGIC, len, header, Buffer.alloc(pad4(header.length)));
  parts.push(vocabBlob, Buffer.alloc(pad4(vocabBlob.length)));
  const u32 = (a: Uint32Array | Int32Array) => parts.push(Buffer.from(a.buffer, a.byteOffset, a.byteLength));
  for (const d of dfas) {
    if (d === null) continue;
    u32(d.trans);
    u32(d.minAccept);
    u32(Uint32Array.from(d.accept));
  }
  for (const b of pool.keys()) u32(b);
  engine.classes.forEach((t, i) => {
    if (t === null) return;
    u32(refs[i]!);
    for (let d = 1; d <= t.w0; d++) u32(t.exits[d]);
  });
  const body = Buffer.concat(parts);
  // the checksum skips the vocabulary section, which carries its own
  const vocabStart = 12 + header.length + pad4(header.length);
  const vocabEnd = vocabStart + vocabBlob.length + pad4(vocabBlob.length);
  const sum = createHash('sha256').update(body.subarray(0, vocabStart)).update(body.subarray(vocabEnd)).digest();
  return Buffer.concat([body, sum]);
}

/** Reads what `serializeEngine` wrote; throws CacheError when the file is damaged or for another key. */
export function deserializeEngine(data: Buffer, grammar: Grammar, key: string, file: string): MaskEngine {
  const fail = (why: string): never => {
    throw new CacheError(`${file}: not a usable mask cache (${why}); expected a file written by treewright for key ${key.slice(0, 12)}…`);
  };
  if (data.length < 8 + 4 + 32 || !data.subarray(0, 8).equals(MAGIC)) fail('wrong magic');
  const body = data.subarray(0, data.length - 32);
  const hlen = body.readUInt32LE(8);
  if (12 + hlen > body.length) fail('truncated header');
  let pos = 12;
  let header: {
    format: string;
    key: string;
    grammarHash: string;
    vocabBytes: number;
    bitsets: number;
    classes: ({ states: number; kmax: number[]; exits: number[] } | null)[];
    dfas: ({ states: number; start: number; shortest: number[] | null } | null)[];
  };
  try {
    header = JSON.parse(body.subarray(pos, pos + hlen).toString('utf8'));
  } catch {
    return fail('bad header');
  }
  if (header === null || typeof header !== 'object' || !isCount(header.vocabBytes, 0, data.length) || !Array.isArray(header.classes)) fail('bad header');
  const vocabStart = 12 + hlen + pad4(hlen);
  const vocabEnd = vocabStart + header.vocabBytes + pad4(header.vocabBytes);
  if (!(vocabEnd <= body.length)) fail('truncated');
  const sum = createHash('sha256').update(body.subarray(0, vocabStart)).update(body.subarray(vocabEnd)).digest();
  if (!sum.equals(data.subarray(data.length - 32))) fail('checksum mismatch');
  if (header.format !== CACHE_FORMAT || header.key !== key || header.grammarHash !== grammar.hash) fail('key mismatch');
  if (header.classes.length !== grammar.tokens.length) fail('class count mismatch');
  pos += hlen + pad4(hlen);
  const vocab: Vocabulary = deserializeVocabulary(new Uint8Array(body.buffer, body.byteOffset + pos, header.vocabBytes), file);
  pos += header.vocabBytes + pad4(header.vocabBytes);
  const nWords = (vocab.vocabSize + 31) >>> 5;
  // one aligned copy of the table section, then zero-copy views into it
  const rest = body.subarray(pos);
  const words = new Uint32Array(rest.length >>> 2);
  new Uint8Array(words.buffer).set(rest.subarray(0, words.length * 4));
  let w = 0;
  const take = (n: number): Uint32Array => {
    if (w + n > words.length) fail('truncated tables');
    const v = words.subarray(w, w + n);
    w += n;
    return v;
  };
  if (!Array.isArray(header.dfas) || header.dfas.length !== grammar.tokens.length) fail('DFA count mismatch');
  const dfas: ByteDfa[] = header.dfas.map((d, i) => {
    if (d === null) return fail(`class ${grammar.tokens[i].name} has no DFA`);
    const name = grammar.tokens[i].name;
    // every value is checked before use: the file is untrusted even when its seal matches
    if (!isCount(d.states, 1, MAX_STATES) || !isCount(d.start, 0, d.states - 1)) fail(`class ${name}: DFA size or start out of range`);
    const trans = new Int32Array(take(d.states * 256));
    const minAccept = new Int32Array(take(d.states));
    const accept = Uint8Array.from(take(d.states));
    for (let k = 0; k < trans.length; k++) if (trans[k] < 0 || trans[k] >= d.states) fail(`class ${name}: a DFA transition leads to state ${trans[k]} of ${d.states}`);
    for (let k = 1; k < d.states; k++) if (minAccept[k] < -1 || minAccept[k] > d.states) fail(`class ${name}: distance to acceptance out of range`);
    for (let k = 0; k < d.states; k++) if (accept[k] > 1) fail(`class ${name}: accept flag out of range`);
    if (d.shortest !== null && (!Array.isArray(d.shortest) || d.shortest.length > d.states || !d.shortest.every((b) => isCount(b, 0, 255)))) fail(`class ${name}: bad shortest lexeme`);
    return { stateCount: d.states, start: d.start, trans, accept, minAccept, shortest: d.shortest === null ? null : Uint8Array.from(d.shortest) };
  });
  const vocabSize = vocab.vocabSize;
  const nodeCount = vocab.trie.nodeCount;
  /** a mask bitset: no bit at or past the vocabulary size (a forged file could otherwise allow ids that do not exist) */
  const bitset = (b: Uint32Array, what: string): Uint32Array => {
    const extra = vocabSize & 31;
    if (extra !== 0 && (b[nWords - 1]! >>> extra) !== 0) fail(`${what} allows token ids at or past the vocabulary size ${vocabSize}`);
    return b;
  };
  if (!isCount(header.bitsets, 0, Math.floor((words.length - w) / Math.max(1, nWords)))) fail('bad bitset count');
  const pool: Uint32Array[] = [];
  for (let i = 0; i < header.bitsets; i++) pool.push(bitset(take(nWords), `bitset ${i}`));
  /** pairs (level, inside) already checked: a level is checked once against each state set it serves */
  const subsetChecked = new Set<number>();
  const automaton = new Automaton(grammar, dfas);
  const tables: (ClassTables | null)[] = header.classes.map((c, i) => {
    if (c === null) return null;
    const t = grammar.tokens[i];
    const term = automaton.rtn.terminals.find((x) => x.kind === 'class' && x.tokenClass === i);
    if (!term) return fail(`class ${t.name} has tables but no terminal`);
    const dfa = term.dfa;
    if (dfa.stateCount !== c.states) fail(`class ${t.name} has ${dfa.stateCount} states, the cache ${c.states}`);
    const w0 = c.states;
    if (!Array.isArray(c.kmax) || c.kmax.length !== w0 + 1 || !c.kmax.every((k) => isCount(k, 0, 1 << 20))) fail(`class ${t.name}: bad budget table sizes`);
    if (!Array.isArray(c.exits) || c.exits.length !== w0 + 1 || !c.exits.every((k) => isCount(k, 0, nodeCount))) fail(`class ${t.name}: bad exit list sizes`);
    const w0Trans = new Int32Array(256);
    const space = grammar.space;
    for (let b = 0; b < 256; b++) w0Trans[b] = b < 128 && space.includes(String.fromCharCode(b)) ? w0 : dfa.trans[dfa.start * 256 + b];
    const ref = (what: string): number => {
      const r = take(1)[0]!;
      if (r >= pool.length) fail(`${what} refers to bitset ${r} of ${pool.length}`);
      return r;
    };
    const insideRef = [0];
    const inside: Uint32Array[] = [new Uint32Array(0)];
    for (let d = 1; d <= w0; d++) {
      insideRef.push(ref(`class ${t.name} state ${d}`));
      inside.push(pool[insideRef[d]!]!);
    }
    const le: Uint32Array[][] = [[]];
    for (let d = 1; d <= w0; d++) {
      const levels: Uint32Array[] = [];
      for (let k = 0; k < Math.min(c.kmax[d], MAX_LE); k++) {
        const r = ref(`class ${t.name} state ${d} level ${k}`);
        const b = pool[r]!;
        // a budget level is a subset of the state's inside set
        const pair = r * pool.length + insideRef[d]!;
        if (!subsetChecked.has(pair)) {
          const within = inside[d]!;
          let stray = 0;
          for (let x = 0; x < nWords; x++) stray |= b[x]! & ~within[x]!;
          if (stray !== 0) fail(`class ${t.name} state ${d}: a budget level allows tokens its state does not`);
          subsetChecked.add(pair);
        }
        levels.push(b);
      }
      le.push(levels);
    }
    const exits: Uint32Array[] = [new Uint32Array(0)];
    for (let d = 1; d <= w0; d++) {
      const ex = take(c.exits[d]);
      for (let x = 0; x < ex.length; x++) if (ex[x] === 0 || ex[x]! >= nodeCount) fail(`class ${t.name} state ${d}: exit node ${ex[x]} of ${nodeCount}`);
      exits.push(ex);
    }
    return { dfa, w0, w0Trans, inside, le, kmax: Int32Array.from(c.kmax), exits };
  });
  if (w !== words.length) fail('trailing data');
  return new MaskEngine(grammar, vocab, {}, tables, automaton);
}

/**
 * Writes `engine`'s tables to the cache folder under `key` the way `loadOrCompile` does (private
 * folder, sealed, atomic replace); returns the file. Throws CacheFileError when the folder is not
 * private to this user.
 */
export function storeEngine(engine: MaskEngine, key: string, cacheDir: string): string {
  privateDir(cacheDir);
  const file = join(cacheDir, `${key}.twmask`);
  writeSealed(file, folderSecret(cacheDir), serializeEngine(engine, key));
  return file;
}

export interface LoadResult {
  readonly engine: MaskEngine;
  readonly fromCache: boolean;
  /** time to read and deserialise the cache file (hit) or 0 */
  readonly cacheLoadMs: number;
  /** time to load the tokenizer and build the tables (miss) or 0 */
  readonly compileMs: number;
  readonly file: string | null;
  /** a damaged cache file that was rebuilt, or null */
  readonly warning: string | null;
}

/**
 * The engine for `grammar` (read from `grammarPath`) × the tokenizer at `tokenizerPath`: from the
 * cache when a file for both hashes exists, else compiled and written to the cache.
 * `cacheDir: false` disables the cache.
 */
export function loadOrCompile(grammar: Grammar, grammarText: string, tokenizerPath: string, cacheDir: string | false = defaultCacheDir()): LoadResult {
  if (cacheDir === false) {
    const t0 = performance.now();
    const engine = new MaskEngine(grammar, loadVocabulary(tokenizerPath));
    return { engine, fromCache: false, cacheLoadMs: 0, compileMs: performance.now() - t0, file: null, warning: null };
  }
  const t0 = performance.now();
  const key = cacheKey(grammarText, tokenizerPath);
  const file = join(cacheDir, `${key}.twmask`);
  const warnings: string[] = [];
  // the folder and its secret: when either is not private to this user the cache is not used
  let secret: Buffer | null = null;
  try {
    privateDir(cacheDir);
    secret = folderSecret(cacheDir);
  } catch (e) {
    if (!(e instanceof CacheFileError)) throw e;
    warnings.push(`${e.message}; running without the mask cache`);
  }
  if (secret !== null && existsSync(file)) {
    try {
      const engine = deserializeEngine(readSealed(file, secret), grammar, key, file);
      return { engine, fromCache: true, cacheLoadMs: performance.now() - t0, compileMs: 0, file, warning: null };
    } catch (e) {
      if (!(e instanceof CacheError) && !(e instanceof VocabularyError) && !(e instanceof CacheFileError)) throw e;
      warnings.push(`${(e as Error).message}; rebuilt it`);
    }
  }
  const t1 = performance.now();
  const engine = new MaskEngine(grammar, loadVocabulary(tokenizerPath));
  const compileMs = performance.now() - t1;
  if (secret !== null) {
    try {
      storeEngine(engine, key, cacheDir);
    } catch (e) {
      if (!(e instanceof CacheFileError)) throw e;
      warnings.push(`${e.message}; the tables were not cached`);
    }
  }
  const warning = warnings.length > 0 ? warnings.join('; ') : null;
  return { engine, fromCache: false, cacheLoadMs: 0, compileMs, file: secret !== null ? file : null, warning };
}
