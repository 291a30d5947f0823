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

/**
 * The tables by their definition (class-tables.ts), one state and one token at a time: inside[d]
 * = tokens whose bytes keep the class's DFA alive from d; le[d][k] = those that then need ≤ k more
 * bytes (k below min(kmax[d], MAX_LE)); kmax[d] = the most bytes any live prefix still needs;
 * exits[d] = accepting nodes with a child byte that may follow a lexeme, in pre-order.
 */
function byDefinition(engine: MaskEngine, i: number) {
  const rtn = engine.automaton.rtn;
  const term = rtn.terminals.find((t) => t.kind === 'class' && t.tokenClass === i)!;
  const dfa = term.dfa;
  const trie = engine.trie;
  const w0 = dfa.stateCount;
  const follow = new Uint8Array(256);
  for (let b = 0; b < 256; b++) if (rtn.space[b]) follow[b] = 1;
  for (const t of rtn.terminals) for (let b = 0; b < 256; b++) if (t.dfa.trans[t.dfa.start * 256 + b] !== 0) follow[b] = 1;
  const step = (s: number, b: number) => (s === w0 ? (rtn.space[b] ? w0 : dfa.trans[dfa.start * 256 + b]!) : dfa.trans[s * 256 + b]!);
  const need = (s: number) => (s === w0 ? dfa.minAccept[dfa.start]! : dfa.minAccept[s]!);
  const out: { inside: Set<number>; le: Set<number>[]; kmax: number; exits: number[] }[] = [];
  for (let d = 1; d <= w0; d++) {
    const inside = new Set<number>();
    const needOf = new Map<number, number>();
    const exits: number[] = [];
    let kmax = 0;
    const visit = (c: number, s: number) => {
      kmax = Math.max(kmax, need(s));
      for (let x = trie.tokStart[c]!; x < trie.tokStart[c + 1]!; x++) {
        inside.add(trie.tokens[x]!);
        needOf.set(trie.tokens[x]!, need(s));
      }
      const children: number[] = [];
      for (let ch = c + 1; ch < trie.end[c]!; ch = trie.end[ch]!) children.push(ch);
      const wordEnd = WORD[trie.byte[c]!] === 1;
      if (s !== w0 && dfa.accept[s] === 1 && children.some((ch) => follow[trie.byte[ch]!] && !(wordEnd && WORD[trie.byte[ch]!] && !rtn.space[trie.byte[ch]!]))) exits.push(c);
      for (const ch of children) {
        const t = step(s, trie.byte[ch]!);
        if (t !== 0) visit(ch, t);
      }
    };
    for (let ch = 1; ch < trie.nodeCount; ch = trie.end[ch]!) {
      const t = step(d, trie.byte[ch]!);
      if (t !== 0) visit(ch, t);
    }
    const le: Set<number>[] = [];
    for (let k = 0; k < Math.min(kmax, 24); k++) le.push(new Set([...inside].filter((id) => needOf.get(id)! <= k)));
    out.push({ inside, le, kmax, exits });
  }
  return out;
}

const members = (b: Uint32Array) => {
  const out: number[] = [];
  for (let w = 0; w < b.length; w++) for (let bit = 0; bit < 32; bit++) if ((b[w]! >>> bit) & 1) out.push(w * 32 + bit);
  return out;
};

describe('class tables: built as defined (state by state, token by token)', () => {
  it('every class of the shed_commands description × the demo tokenizer', () => {
    const { engine } = loadOrCompile(GRAMMAR, TEXT, TOKENIZER, false);
    engine.classes.forEach((c, i) => {
      if (c === null) return;
      const ref = byDefinition(engine, i);
      for (let d = 1; d <= c.w0; d++) {
        const r = ref[d - 1]!;
        const at = `${GRAMMAR.tokens[i]!.name} state ${d}`;
        expect(members(c.inside[d]!), at).toEqual([...r.inside].sort((a, b) => a - b));
        expect(c.kmax[d], at).toBe(r.kmax);
        expect(c.le[d]!.map(members), at).toEqual(r.le.map((x) => [...x].sort((a, b) => a - b)));
        expect(Array.from(c.exits[d]!), at).toEqual(r.exits);
      }
    });
  }, 300_000);
});

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
