/**
 * The fingerprint of an evaluation's set-up: one SHA-256 per thing a row depends on — the model's
 * files, the grammar description, the bound names, what programs run on (database or executor
 * module), and the decoding options. A job carries the fingerprint it was made for; a worker whose
 * own files give another fingerprint refuses the job and says which part differs.
 *
 * Cost: reads every hashed file once (the model's ONNX files dominate: ~11 MB for the shipped
 * model, a few hundred MB for a 60M-parameter one at about 0.5–1 s per 500 MB).
 */
import { createHash, type Hash } from 'node:crypto';
import { closeSync, existsSync, openSync, readdirSync, readSync, statSync } from 'node:fs';
import { join } from 'node:path';
import type { NameBindings } from '../description/ir.ts';

/** Decoding options of an evaluation (null: the default — greedy, the default length, the model's prefix). */
export interface Decoding {
  readonly beam: number | null;
  readonly maxTokens: number | null;
  readonly prefix: string | null;
}

/** The parts, each a lowercase hex SHA-256. */
export interface Fingerprint {
  readonly model: string;
  readonly grammar: string;
  readonly names: string;
  readonly execution: string;
  readonly decoding: string;
}

export const FINGERPRINT_PARTS = ['model', 'grammar', 'names', 'execution', 'decoding'] as const;

/** Model files that decide the outputs: config, tokenizer, and every ONNX graph (and its external data). */
const MODEL_FILES = ['config.json', 'generation_config.json', 'tokenizer.json', 'tokenizer_config.json', 'special_tokens_map.json'];

function hashFile(h: Hash, file: string): void {
  const fd = openSync(file, 'r');
  try {
    const buf = Buffer.allocUnsafe(1 << 20);
    for (;;) {
      const n = readSync(fd, buf, 0, buf.length, null);
      if (n === 0) break;
      h.update(buf.subarray(0, n));
    }
  } finally {
    closeSync(fd);
  }
}

/** SHA-256 over the model folder's config, tokenizer and ONNX files (names and bytes). */
export function modelHash(dir: string): string {
  const h = createHash('sha256');
  const files = MODEL_FILES.filter((f) => existsSync(join(dir, f)));
  const onnx = join(dir, 'onnx');
  if (existsSync(onnx) && statSync(onnx).isDirectory()) {
    for (const f of readdirSync(onnx).sort()) if (/\.onnx(_data)?$|\.onnx\.data$/.test(f)) files.push(`onnx/${f}`);
  }
  for (const f of files) {
    h.update(`${f}\u0000${statSync(join(dir, f)).size}\u0000`);
    hashFile(h, join(dir, f));
  }
  return h.digest('hex');
}

/** SHA-256 of one file's bytes. */
export function fileHash(file: string): string {
  const h = createHash('sha256');
  hashFile(h, file);
  return h.digest('hex');
}

function textHash(text: string): string {
  return createHash('sha256').update(text).digest('hex');
}

/** Name bindings with their sets in name order (each set's members in the order given). */
export function namesHash(names: NameBindings): string {
  const sorted = Object.keys(names)
    .sort()
    .map((k) => [k, names[k]]);
  return textHash(JSON.stringify(sorted));
}

/** A stable text of decoding options (the key of one RowMaker, and what decodingHash hashes). */
export function decodingKey(d: Decoding): string {
  return JSON.stringify([d.beam, d.maxTokens, d.prefix]);
}

export function decodingHash(d: Decoding): string {
  return textHash(decodingKey(d));
}

/** What the programs run on: the --db file's bytes and/or the --executor module's bytes. */
export function executionHash(db: string | undefined, executor: string | undefined): string {
  return textHash(JSON.stringify([db === undefined ? null : fileHash(db), executor === undefined ? null : fileHash(executor)]));
}

export interface FingerprintInput {
  readonly modelDir: string;
  readonly grammarFile: string;
  readonly names: NameBindings;
  readonly db?: string;
  readonly executor?: string;
  readonly decoding: Decoding;
}

export function fingerprint(input: FingerprintInput): Fingerprint {
  return {
    model: modelHash(input.modelDir),
    grammar: fileHash(input.grammarFile),
    names: namesHash(input.names),
    execution: executionHash(input.db, input.executor),
    decoding: decodingHash(input.decoding),
  };
}

/** One hash for the whole fingerprint (what job ids are made from). */
export function fingerprintKey(fp: Fingerprint): string {
  return textHash(FINGERPRINT_PARTS.map((p) => fp[p]).join(':'));
}

/** The parts that differ between two fingerprints (empty when they agree). */
export function differingParts(a: Fingerprint, b: Fingerprint, parts: readonly (keyof Fingerprint)[] = FINGERPRINT_PARTS): (keyof Fingerprint)[] {
  return parts.filter((p) => a[p] !== b[p]);
}
