// Outside reference: sentencepiece's own encoding of every text of the corpus (written by
// models/src/train_tokenizer.py into models/coop/data/tokenizer_reference.jsonl.gz). Our
// tokenizer.json, loaded by @huggingface/transformers' AutoTokenizer from the local folder, must
// give the same ids, followed by `</s>`.
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { gunzipSync } from 'node:zlib';
import { AutoTokenizer, env } from '@huggingface/transformers';
import { describe, expect, it, vi } from 'vitest';

vi.setConfig({ testTimeout: 180_000 });

const DIR = resolve('models/coop');

describe('demo tokenizer', () => {
  it('encodes the whole corpus exactly as sentencepiece did', async () => {
    env.allowRemoteModels = false;
    const tok = await AutoTokenizer.from_pretrained(DIR, { local_files_only: true });
    const eos = tok.convert_tokens_to_ids('</s>') as number;
    expect(eos).toBe(1);
    const lines = gunzipSync(readFileSync(resolve(DIR, 'data/tokenizer_reference.jsonl.gz'))).toString('utf8').split('\n').filter((l) => l !== '');
    expect(lines.length).toBeGreaterThan(20_000);
    const bad: string[] = [];
    for (const line of lines) {
      const { text, ids } = JSON.parse(line) as { text: string; ids: number[] };
      const ours = tok.encode(text);
      if (ours.length !== ids.length + 1 || ours.some((id, i) => id !== (i < ids.length ? ids[i] : eos))) {
        if (bad.length < 5) bad.push(`${JSON.stringify(text)}: ${JSON.stringify(ours)} vs ${JSON.stringify(ids)}`);
        else bad.push('');
      }
    }
    expect(bad.length, bad.slice(0, 5).join('\n')).toBe(0);
    // decoding gives the text back (the Metaspace decoder)
    const sample = JSON.parse(lines[1]) as { text: string; ids: number[] };
    expect(tok.decode(sample.ids)).toBe(sample.text);
  });
});
