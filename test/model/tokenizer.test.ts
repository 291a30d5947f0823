/**
 * loadModel tokenizes questions with @huggingface/tokenizers instead of loading transformers.js (a
 * few hundred milliseconds of start-up). Reference: transformers.js v4 itself — its AutoTokenizer
 * on the same folder must give the same ids (EOS included) for every question of the shipped
 * model's dev and test sets, with and without the target prefix, for the shipped model and the
 * test fixture, plus texts outside the training vocabulary (accents, digits, symbols, spacing).
 */
import { AutoTokenizer } from '@huggingface/transformers';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadModel } from '../../src/model/index.ts';

const ODD = ['', ' ', 'Crème brûlée?  2 × 3 = 6', 'tab\there\nnewline', 'ÄÖÜ ß ø', '🍎 orchards 12.5%', 'to sql: to sql: twice', 'x'.repeat(300)];

function questions(file: string): string[] {
  return readFileSync(file, 'utf8')
    .split('\n')
    .filter((l) => l.trim() !== '')
    .map((l) => (JSON.parse(l) as { question: string }).question);
}

describe('question tokens', () => {
  for (const [dir, files] of [
    ['models/coop', ['models/coop/data/dev.jsonl', 'models/coop/data/test.jsonl']],
    ['test/fixtures/tiny-seq2seq', []],
  ] as const) {
    it(`${dir}: the ids transformers.js' AutoTokenizer gives`, async () => {
      const model = await loadModel(dir);
      try {
        const theirs = await AutoTokenizer.from_pretrained(resolve(dir), { local_files_only: true });
        const texts = [...ODD, ...files.flatMap(questions)];
        expect(texts.length).toBeGreaterThan(files.length > 0 ? 100 : 5);
        let compared = 0;
        for (const q of texts) {
          for (const text of [q, `to sql: ${q}`, `to lf: ${q}`]) {
            expect(model.encodeQuestion(text), text).toEqual(theirs.encode(text));
            compared++;
          }
        }
        expect(compared).toBe(texts.length * 3);
      } finally {
        await model.dispose();
      }
    }, 300_000);
  }
});
