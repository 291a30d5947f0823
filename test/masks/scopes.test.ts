/**
 * Name scopes in the masks (automaton/scopes.ts, masks/walk.ts): the shipped SQL grammar's `scope`,
 * `enter` and `known … by` markers against SQLite's own name resolution — better-sqlite3 12.x
 * `Database.prepare` (SQLite 3.5x), which refuses "no such column", "ambiguous column name" and
 * "no such table" at prepare time — on the demo schema (grammars/sql/coop.sql) and on a second
 * invented schema written here (shared and qualified column names, a table with one column).
 */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { describe, expect, it } from 'vitest';
import { Automaton } from '../../src/automaton/index.ts';
import { compileMasks } from '../../src/masks/index.ts';
import { namesFromDatabase } from '../../src/tree/index.ts';
import type { NameBindings } from '../../src/description/ir.ts';
import { grammar, rng, smallVocabulary, vocabulary } from './helpers.ts';
import { readFileSync } from 'node:fs';
import { ROOT } from './helpers.ts';

/** A second schema: a packing line. `code` is in three tables, `label` in two, `note` in one. */
const PACKING = `
CREATE TABLE crates (code TEXT, label TEXT, weight_kg REAL, pallet_code TEXT);
CREATE TABLE pallets (code TEXT, label TEXT, bay INTEGER);
CREATE TABLE bays (code TEXT, aisle INTEGER, note TEXT);
CREATE TABLE stamps (stamp TEXT);
`;

interface Schema {
  readonly name: string;
  readonly db: Database.Database;
  readonly names: NameBindings;
}

function schema(name: string, sql: string): Schema {
  const file = join(mkdtempSync(join(tmpdir(), 'tw-scopes-')), `${name}.db`);
  const w = new Database(file);
  w.exec(sql);
  w.close();
  return { name, db: new Database(file, { readonly: true }), names: namesFromDatabase(file) };
}

const SCHEMAS = [schema('coop', readFileSync(join(ROOT, 'grammars/sql/coop.sql'), 'utf8')), schema('packing', PACKING)];

function prepares(db: Database.Database, text: string): string | null {
  try {
    db.prepare(text);
    return null;
  } catch (e) {
    return (e as Error).message;
  }
}

describe('scopes: complete programs are accepted exactly when SQLite prepares them', () => {
  const cases: Record<string, string[]> = {
    coop: [
      'SELECT name FROM growers',
      'SELECT name FROM growers JOIN orchards ON growers.id = orchards.grower_id',
      'SELECT village FROM growers JOIN orchards ON growers.id = orchards.grower_id',
      'SELECT hectares FROM growers',
      'SELECT hectares FROM growers JOIN orchards ON id = id',
      'SELECT hectares FROM growers JOIN orchards ON grower_id = growers.id',
      "SELECT * FROM lots WHERE variety_id IN (SELECT id FROM varieties WHERE fruit = 'apple')",
      'SELECT * FROM lots WHERE variety_id IN (SELECT id FROM varieties WHERE tonnes > 3)',
      'SELECT * FROM lots WHERE variety_id IN (SELECT variety_id FROM varieties)',
      'SELECT * FROM lots WHERE variety_id IN (SELECT lots.id FROM varieties)',
      'SELECT * FROM lots WHERE variety_id IN (SELECT growers.id FROM varieties)',
      'SELECT orchards.id FROM lots',
      'SELECT lots.id FROM lots',
      'SELECT * FROM lots JOIN lots ON lots.id = lots.id',
      'SELECT COUNT(*) FROM lots GROUP BY grade HAVING SUM(tonnes) > 2',
      'SELECT grade FROM lots JOIN sheds ON shed_id = sheds.id GROUP BY name',
      'SELECT grade FROM lots JOIN sheds ON shed_id = sheds.id GROUP BY sheds.name ORDER BY COUNT(id)',
    ],
    packing: [
      'SELECT code FROM crates',
      'SELECT code FROM crates JOIN pallets ON pallet_code = pallets.code',
      'SELECT weight_kg, bay FROM crates JOIN pallets ON pallet_code = pallets.code',
      'SELECT note FROM crates JOIN bays ON crates.code = bays.code',
      'SELECT label FROM pallets JOIN bays ON bay = aisle',
      'SELECT label FROM pallets JOIN crates ON bay = weight_kg',
      'SELECT stamp FROM stamps WHERE stamp IN (SELECT label FROM crates)',
      'SELECT stamp FROM stamps WHERE stamp IN (SELECT stamp FROM crates)',
      'SELECT stamp FROM crates',
    ],
  };
  for (const sc of SCHEMAS) {
    it(sc.name, () => {
      const inst = new Automaton(grammar('sql')).bind(sc.names);
      let accepted = 0;
      let refused = 0;
      for (const text of cases[sc.name]) {
        const s = inst.advanceBytes(inst.start, new TextEncoder().encode(text));
        const err = prepares(sc.db, text);
        expect(inst.isComplete(s), `${text}: SQLite says ${err ?? 'prepares'}`).toBe(err === null);
        if (err === null) accepted++;
        else refused++;
      }
      expect(accepted).toBeGreaterThan(3);
      expect(refused).toBeGreaterThan(2);
    });
  }
});

describe('scopes: random constrained walks with the llama3 vocabulary (128k) end and prepare in SQLite', () => {
  for (const sc of SCHEMAS) {
    it(sc.name, () => {
      const v = vocabulary('llama3');
      const c = compileMasks(grammar('sql'), v).bind(sc.names);
      const rand = rng(2026 + sc.name.length);
      const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
      const eos = new Set(v.eosIds);
      const allowed = new Int32Array(v.vocabSize);
      const words = new Int32Array(v.vocabSize);
      const minTokens = c.tokensToComplete(c.start());
      const WALKS = 40;
      let prepared = 0;
      let joins = 0;
      for (let w = 0; w < WALKS; w++) {
        const maxLen = [minTokens, minTokens + 4, 24, 48, 96][w % 5];
        let s = c.start();
        const bytes: number[] = [];
        let ended = false;
        for (let step = 0; step < maxLen; step++) {
          c.writeAllowed(s, maxLen - step, mask);
          let n = 0;
          let k = 0;
          for (let word = 0; word < mask.length; word++) {
            let bits = mask[word];
            while (bits !== 0) {
              const low = bits & -bits;
              const id = (word << 5) + (31 - Math.clz32(low));
              allowed[n++] = id;
              // tokens with a letter: the walks write names and keywords, not only spaces
              if (!eos.has(id) && v.bytesOf(id).some((b) => (b | 32) >= 97 && (b | 32) <= 122)) words[k++] = id;
              bits ^= low;
            }
          }
          expect(n, `dead end after ${JSON.stringify(Buffer.from(bytes).toString())}`).toBeGreaterThan(0);
          const late = step > 12 && rand() < 0.3;
          let id = k > 0 && !late && rand() < 0.9 ? words[Math.floor(rand() * k)] : allowed[Math.floor(rand() * n)];
          if (late) for (let i = 0; i < n; i++) if (eos.has(allowed[i])) id = allowed[i];
          if (eos.has(id)) {
            ended = true;
            break;
          }
          s = c.advance(s, id);
          bytes.push(...v.bytesOf(id));
        }
        const text = new TextDecoder('utf-8', { fatal: true }).decode(Uint8Array.from(bytes));
        expect(ended, `no EOS within ${maxLen} tokens: ${JSON.stringify(text)}`).toBe(true);
        expect(prepares(sc.db, text), text).toBeNull();
        prepared++;
        if (/\bJOIN\b/.test(text)) joins++;
      }
      expect(prepared).toBe(WALKS);
      expect(joins).toBeGreaterThan(0);
    }, 600_000);
  }
});

describe('scopes: the fast mask equals the per-token reference of the same automaton', () => {
  // the reference tries every token with advance + shortest completion (common practice, no
  // source): the walks' filters, skipped options and distances against byte-by-byte stepping
  for (const sc of SCHEMAS) {
    it(sc.name, () => {
      const v = vocabulary('llama3');
      const rand = rng(99 + sc.name.length);
      const pieces: Uint8Array[] = [];
      for (let ch = 9; ch < 127; ch++) if (ch === 9 || ch === 10 || ch === 13 || ch >= 32) pieces.push(Uint8Array.of(ch));
      const enc = new TextEncoder();
      // whole and partial names, names with punctuation around them (".id", "id,", "(SELECT")
      for (const list of [sc.names.Table, sc.names.Column]) for (const m of list) {
        pieces.push(enc.encode(m), enc.encode(` ${m}`), enc.encode(`.${m}`), enc.encode(`${m},`), enc.encode(m.slice(0, 3)));
      }
      for (const t of [' FROM', ' JOIN', ' WHERE', ' ON', ' =', '(SELECT', ' IN', ' GROUP', ' BY']) pieces.push(enc.encode(t));
      while (pieces.length < 2500) {
        const id = Math.floor(rand() * v.vocabSize);
        if (v.isNormal(id)) pieces.push(v.bytesOf(id).slice());
      }
      const small = smallVocabulary(pieces);
      const c = compileMasks(grammar('sql'), small).bind(sc.names);
      const fast = new Uint32Array((small.vocabSize + 31) >>> 5);
      const slow = new Uint32Array(fast.length);
      let compared = 0;
      for (let w = 0; w < 10; w++) {
        let s = c.start();
        const steps = 4 + Math.floor(rand() * 14);
        for (let k = 0; k <= steps; k++) {
          const need = c.tokensToComplete(s);
          for (const budget of [need, need + 2, Infinity]) {
            c.writeAllowed(s, budget, fast);
            c.writeAllowedNaive(s, budget, slow);
            expect(Array.from(fast), `budget ${budget}`).toEqual(Array.from(slow));
            compared++;
          }
          c.writeAllowed(s, Infinity, fast);
          const ids: number[] = [];
          for (let id = 0; id < small.vocabSize - 1; id++) if ((fast[id >>> 5] >>> (id & 31)) & 1) ids.push(id);
          if (ids.length === 0) break;
          // prefer names and keywords
          const wordy = ids.filter((id) => /[a-z]/i.test(Buffer.from(small.bytesOf(id)).toString()));
          const pick = wordy.length > 0 && rand() < 0.85 ? wordy : ids;
          s = c.advance(s, pick[Math.floor(rand() * pick.length)]);
        }
      }
      expect(compared).toBeGreaterThan(60);
    }, 600_000);
  }
});


