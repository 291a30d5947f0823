/**
 * Equal class-table bitsets are stored once (BitsetPool, cache format TWMASK03). The reference is
 * the tables built without sharing: each state's inside set and budget levels must be the same
 * words, in memory and after a trip through the cache file; a file whose references point past
 * its bitsets is refused.
 */
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { WORD } from '../../src/automaton/internal.ts';
import { compileDescription } from '../../src/description/index.ts';
import { buildClassTables } from '../../src/masks/class-tables.ts';
import { cacheKey, CacheError, deserializeEngine, loadOrCompile, serializeEngine } from '../../src/masks/index.ts';
import type { MaskEngine } from '../../src/masks/engine.ts';
import { ROOT } from './helpers.ts';

const FILE = join(ROOT, 'grammars/shed_commands/shed_commands.twg');
const TEXT = readFileSync(FILE, 'utf8');
const GRAMMAR = compileDescription(TEXT, FILE).grammar!;
const TOKENIZER = join(ROOT, 'models/coop/tokenizer.json');

/** The tables of every class built again, each bitset its own array (no pool). */
function unshared(engine: MaskEngine) {
  const rtn = engine.automaton.rtn;
  const follow = new Uint8Array(256);
  for (let b = 0; b < 256; b++) if (rtn.space[b]) follow[b] = 1;
  for (const t of rtn.terminals) for (let b = 0; b < 256; b++) if (t.dfa.trans[t.dfa.start * 256 + b] !== 0) follow[b] = 1;
  return engine.classes.map((c, i) => {
    if (c === null) return null;
    const term = rtn.terminals.find((t) => t.kind === 'class' && t.tokenClass === i)!;
    const pool = { intern: (b: Uint32Array) => b, sets: [] };
    return buildClassTables(term.dfa, engine.trie, rtn.space, follow, WORD, engine.tables.nWords, pool as never);
  });
}

function expectSameTables(engine: MaskEngine, reference: ReturnType<typeof unshared>): void {
  engine.classes.forEach((c, i) => {
    const r = reference[i]!;
    if (c === null) return expect(r).toBeNull();
    expect(c.w0).toBe(r.w0);
    for (let d = 1; d <= c.w0; d++) {
      expect(Array.from(c.inside[d]!), `class ${i} state ${d}`).toEqual(Array.from(r.inside[d]!));
      expect(c.le[d]!.map((b) => Array.from(b)), `class ${i} state ${d} levels`).toEqual(r.le[d]!.map((b) => Array.from(b)));
      expect(Array.from(c.exits[d]!)).toEqual(Array.from(r.exits[d]!));
    }
  });
}

describe('class tables: equal bitsets stored once', () => {
  const dir = mkdtempSync(join(tmpdir(), 'tw-cache-pool-'));

  it('the shared tables are the unshared ones, in memory and read back from the cache file', () => {
    const first = loadOrCompile(GRAMMAR, TEXT, TOKENIZER, dir);
    expect(first.fromCache).toBe(false);
    const reference = unshared(first.engine);
    expectSameTables(first.engine, reference);
    const second = loadOrCompile(GRAMMAR, TEXT, TOKENIZER, dir);
    expect(second.fromCache).toBe(true);
    expectSameTables(second.engine, reference);
    // sharing happened: fewer distinct arrays than table entries (a bounded string repeats levels)
    const all = first.engine.classes.flatMap((c) => (c === null ? [] : [...c.inside.slice(1), ...c.le.flat()]));
    expect(new Set(all).size).toBeLessThan(all.length / 2);
    // a loaded engine writes the same file again (its views are shared the same way)
    const key = cacheKey(TEXT, TOKENIZER);
    expect(serializeEngine(second.engine, key).equals(serializeEngine(first.engine, key))).toBe(true);
  }, 120_000);

  it('a file that claims fewer bitsets than its references use is refused', () => {
    const { engine } = loadOrCompile(GRAMMAR, TEXT, TOKENIZER, dir);
    const key = cacheKey(TEXT, TOKENIZER);
    const c = engine.classes.find((x) => x !== null)!;
    const saved = c.inside[1]!;
    // a bitset the pool has never seen: serialised as an extra one; then the header's count is lowered
    c.inside[1] = Uint32Array.from(saved);
    let data: Buffer;
    try {
      data = serializeEngine(engine, key);
    } finally {
      c.inside[1] = saved;
    }
    const hlen = data.readUInt32LE(8);
    const header = JSON.parse(data.subarray(12, 12 + hlen).toString('utf8')) as { bitsets: number };
    const forged = Buffer.from(data.subarray(12, 12 + hlen).toString('utf8').replace(`"bitsets":${header.bitsets}`, `"bitsets":${String(header.bitsets - 1).padStart(String(header.bitsets).length, ' ')}`));
    expect(forged.length).toBe(hlen);
    const body = Buffer.concat([data.subarray(0, 12), forged, data.subarray(12 + hlen, data.length - 32)]);
    // recompute the internal checksum the way serializeEngine does (vocabulary section excluded)
    const pad = (n: number) => (4 - (n & 3)) & 3;
    const vocabStart = 12 + hlen + pad(hlen);
    const vocabBytes = (JSON.parse(forged.toString('utf8')) as { vocabBytes: number }).vocabBytes;
    const vocabEnd = vocabStart + vocabBytes + pad(vocabBytes);
    const sum = createHash('sha256').update(body.subarray(0, vocabStart)).update(body.subarray(vocabEnd)).digest();
    const file = Buffer.concat([body, sum]);
    expect(() => deserializeEngine(file, GRAMMAR, key, 'forged.twmask')).toThrow(CacheError);
    expect(() => deserializeEngine(file, GRAMMAR, key, 'forged.twmask')).toThrow(/refers to bitset \d+ of \d+|trailing data/);
    // the unforged file (checksum recomputed the same way) loads: the forgery is what is refused
    const plainSum = createHash('sha256').update(data.subarray(0, vocabStart)).update(data.subarray(vocabEnd, data.length - 32)).digest();
    expect(plainSum.equals(data.subarray(data.length - 32))).toBe(true);
  }, 120_000);
});
