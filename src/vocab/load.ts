/**
 * tokenizer.json (+ tokenizer_config.json beside it) → Vocabulary.
 */
import { createHash } from 'node:crypto';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { set, words } from '../util/bitset.ts';
import { compileDecoder } from './decoder.ts';
import { VocabularyError, typeName } from './errors.ts';
import { locateJsonError, pathKey, show } from '../util/json.ts';
import { Vocabulary, type ModelType } from './vocabulary.ts';

/** Largest accepted token id + 1 (4,194,304; real vocabularies are ≤ 262,144 today). */
export const MAX_VOCAB_SIZE = 1 << 22;

export interface LoadOptions {
  /** EOS tokens (content strings or ids) replacing what the files say. */
  eos?: readonly (string | number)[];
  /** BOS tokens (content strings or ids) replacing what the files say. */
  bos?: readonly (string | number)[];
  /** tokenizer_config.json: a path, its parsed content, or null to ignore it. Default: the
   * tokenizer_config.json in the same folder as the tokenizer file, if there is one. */
  config?: string | Record<string, unknown> | null;
  /** File name used in messages when JSON is passed directly (default `<inline>`). */
  file?: string;
}

/** Common EOS / BOS token names, tried in this order when the files name none (common practice, no source). */
const EOS_NAMES = ['</s>', '<|endoftext|>', '<eos>', '<|im_end|>', '<|end_of_text|>', '<|eot_id|>', '<end_of_turn>'];
const BOS_NAMES = ['<s>', '<|begin_of_text|>', '<bos>', '<|startoftext|>'];

type Json = Record<string, unknown>;
const utf8 = new TextEncoder();

function parseJson(text: string, file: string): unknown {
  try {
    return JSON.parse(text);
  } catch {
    const where = locateJsonError(text);
    if (where === null) throw new VocabularyError(file, '1:1', 'malformed JSON; expected a JSON text');
    throw new VocabularyError(file, `${where.line}:${where.column}`, `malformed JSON; ${where.message}`);
  }
}

/** Files at least this large have their `merges` array skipped rather than parsed. */
const SKIP_MERGES_FROM = 4 * 2 ** 20;

/**
 * The text with the BPE `merges` array replaced by `[]`: nothing here reads the merges, and for a
 * large vocabulary (gemma3: half a million pairs) parsing them is most of the JSON object graph —
 * its time and its memory. The skipped part is checked only for closed strings and balanced
 * brackets (a file whose merges are otherwise malformed loads here; the tokenizer library refuses
 * it). Returns the text unchanged when no such array is found.
 */
function withoutMerges(text: string): string {
  const re = /"merges"\s*:\s*\[/g;
  for (let m = re.exec(text); m !== null; m = re.exec(text)) {
    const open = m.index + m[0].length - 1;
    let depth = 0;
    let inString = false;
    for (let i = open; i < text.length; i++) {
      const c = text.charCodeAt(i);
      if (inString) {
        if (c === 92) i++; // backslash: skip the escaped character
        else if (c === 34) inString = false;
      } else if (c === 34) inString = true;
      else if (c === 91) depth++;
      else if (c === 93 && --depth === 0) return `${text.slice(0, open)}[]${text.slice(i + 1)}`;
    }
    return text; // unbalanced: let JSON.parse report it
  }
  return text;
}

/** JSON.parse of the text without its merges; on failure the whole text is parsed, so errors are located in it. */
function parseWithoutMerges(text: string, file: string): unknown {
  const cut = withoutMerges(text);
  if (cut !== text) {
    try {
      return JSON.parse(cut);
    } catch {
      // fall through: locate the error in the file as it is
    }
  }
  return parseJson(text, file);
}

function isObject(v: unknown): v is Json {
  return v !== null && typeof v === 'object' && !Array.isArray(v);
}

/**
 * Loads a Hugging Face tokenizer.json. `source` is a file path, JSON text (starting with `{`), or
 * the parsed object.
 */
export function loadVocabulary(source: string | object, options: LoadOptions = {}): Vocabulary {
  let file = options.file ?? '<inline>';
  let text: string | undefined;
  let root: unknown;
  let configPath: string | undefined;
  let fileHash: string | undefined;
  if (typeof source === 'string' && !/^\s*[{[]/.test(source)) {
    file = options.file ?? source;
    let data: Buffer;
    try {
      data = readFileSync(source);
    } catch (e) {
      throw new VocabularyError(file, '$', `cannot read the file (${(e as Error).message}); expected a readable tokenizer.json`);
    }
    fileHash = createHash('sha256').update(data).digest('hex');
    text = data.toString('utf8');
    root = text.length >= SKIP_MERGES_FROM ? parseWithoutMerges(text, file) : parseJson(text, file);
    const beside = join(dirname(source), 'tokenizer_config.json');
    if (existsSync(beside)) configPath = beside;
  } else if (typeof source === 'string') {
    text = source;
    root = parseJson(text, file);
  } else {
    root = source;
    text = JSON.stringify(source);
  }
  fileHash ??= createHash('sha256').update(text).digest('hex');

  let config: Json | undefined;
  let configFile = '<config>';
  if (options.config === null) config = undefined;
  else if (typeof options.config === 'string') {
    configFile = options.config;
    config = readConfig(options.config);
  } else if (isObject(options.config)) config = options.config;
  else if (configPath !== undefined) {
    configFile = configPath;
    config = readConfig(configPath);
  }

  if (!isObject(root)) throw new VocabularyError(file, '$', `expected an object, found ${typeName(root)}`);
  const model = root.model;
  if (!isObject(model)) throw new VocabularyError(file, '$.model', `expected an object, found ${typeName(model)}`);

  const pieces: (string | undefined)[] = []; // id → piece (model vocabulary); holes for unused ids
  let unkId = -1;
  const modelType = readModel(model, file, pieces, (id) => (unkId = id));
  const lookupPiece = (name: string): number | undefined => {
    const vocab = model.vocab;
    if (Array.isArray(vocab)) {
      const i = vocab.findIndex((e) => Array.isArray(e) && e[0] === name);
      return i < 0 ? undefined : i;
    }
    const v = Object.prototype.hasOwnProperty.call(vocab, name) ? (vocab as Json)[name] : undefined;
    return typeof v === 'number' ? v : undefined;
  };

  // Added tokens: override the model's piece for their id, decode as their content.
  const added = new Map<number, { content: string; special: boolean }>();
  const addedByContent = new Map<string, number>();
  const at = root.added_tokens;
  if (at !== undefined && at !== null) {
    if (!Array.isArray(at)) throw new VocabularyError(file, '$.added_tokens', `expected an array, found ${typeName(at)}`);
    at.forEach((tok, i) => {
      const p = pathKey('$.added_tokens', i);
      if (!isObject(tok)) throw new VocabularyError(file, p, `expected an object {"id", "content", "special"}, found ${typeName(tok)}`);
      const id = checkId(tok.id, file, pathKey(p, 'id'));
      const content = tok.content;
      if (typeof content !== 'string' || content === '') {
        throw new VocabularyError(file, pathKey(p, 'content'), `expected a non-empty string, found ${typeName(content)}`);
      }
      const special = tok.special ?? false;
      if (typeof special !== 'boolean') throw new VocabularyError(file, pathKey(p, 'special'), `expected true or false, found ${typeName(special)}`);
      if (added.has(id)) throw new VocabularyError(file, pathKey(p, 'id'), `duplicate id ${id} (also an earlier added token); expected unique ids`);
      added.set(id, { content, special });
      if (!addedByContent.has(content)) addedByContent.set(content, id);
    });
  }

  let maxId = pieces.length - 1;
  for (const id of added.keys()) if (id > maxId) maxId = id;
  if (maxId < 0) throw new VocabularyError(file, '$.model.vocab', 'the vocabulary is empty; expected at least one token');
  const vocabSize = maxId + 1;

  const dec = compileDecoder(root.decoder, file);
  const offsets = new Uint32Array(vocabSize + 1);
  const special = words(vocabSize);
  const absent = words(vocabSize);
  let store = Buffer.allocUnsafe(1 << 20);
  let total = 0;
  for (let id = 0; id < vocabSize; id++) {
    offsets[id] = total;
    const a = added.get(id);
    const piece = a !== undefined ? a.content : pieces[id];
    if (piece === undefined) {
      set(absent, id);
      continue;
    }
    const need = total + 3 * piece.length + 1;
    if (need > store.length) {
      const bigger = Buffer.allocUnsafe(Math.max(need, store.length * 2));
      store.copy(bigger, 0, 0, total);
      store = bigger;
    }
    if (a !== undefined && a.special) {
      set(special, id);
      total += store.write(piece, total, 'utf8');
    } else total = dec.write(piece, a !== undefined, store, total);
  }
  offsets[vocabSize] = total;
  const bytes = new Uint8Array(total);
  bytes.set(store.subarray(0, total));
  if (unkId >= 0) set(special, unkId);

  const resolve = (name: string): number | undefined => addedByContent.get(name) ?? lookupPiece(name);
  const fromOption = (list: readonly (string | number)[], what: string): number[] =>
    list.map((x, i) => {
      const id = typeof x === 'number' ? x : resolve(x);
      if (id === undefined || !Number.isInteger(id) || id < 0 || id >= vocabSize || (pieces[id] === undefined && !added.has(id))) {
        throw new VocabularyError(file, `options.${what}[${i}]`, `${show(x)} is not a token of this vocabulary; expected a token content or an id below ${vocabSize}`);
      }
      return id;
    });
  const fromConfig = (key: string): number[] | undefined => {
    if (config === undefined || !(key in config)) return undefined;
    let v = config[key];
    if (v === null) return [];
    if (isObject(v)) v = v.content;
    if (typeof v !== 'string') throw new VocabularyError(configFile, `$.${key}`, `expected a token string or {"content": …}, found ${typeName(config[key])}`);
    const id = resolve(v);
    if (id === undefined) throw new VocabularyError(configFile, `$.${key}`, `${show(v)} is not a token of ${file}; expected one of its tokens`);
    return [id];
  };
  const fromTemplate = (which: 'first' | 'last'): number[] | undefined => {
    const pp = root.post_processor;
    if (!isObject(pp)) return undefined;
    if (pp.type === 'TemplateProcessing' && Array.isArray(pp.single) && pp.single.length > 1) {
      const item = which === 'first' ? pp.single[0] : pp.single[pp.single.length - 1];
      const name = isObject(item) && isObject(item.SpecialToken) ? item.SpecialToken.id : undefined;
      const id = typeof name === 'string' ? resolve(name) : undefined;
      return id === undefined ? undefined : [id];
    }
    if (pp.type === 'RobertaProcessing' || pp.type === 'BertProcessing') {
      const pair = which === 'first' ? pp.cls : pp.sep;
      if (Array.isArray(pair) && typeof pair[0] === 'string') {
        const id = resolve(pair[0]);
        return id === undefined ? undefined : [id];
      }
    }
    return undefined;
  };
  const byName = (names: string[]): number[] => {
    for (const n of names) {
      const id = resolve(n);
      if (id !== undefined) return [id];
    }
    return [];
  };
  const eosIds = options.eos ? fromOption(options.eos, 'eos') : fromConfig('eos_token') ?? fromTemplate('last') ?? byName(EOS_NAMES);
  const bosIds = options.bos ? fromOption(options.bos, 'bos') : fromConfig('bos_token') ?? fromTemplate('first') ?? byName(BOS_NAMES);
  for (const id of [...eosIds, ...bosIds]) set(special, id);

  const hash = createHash('sha256')
    .update(`treewright-vocab-v1\n${fileHash}\neos=${eosIds.join(',')}\nbos=${bosIds.join(',')}\n`)
    .digest('hex');
  return new Vocabulary({
    vocabSize, bytes, offsets, special, absent, eosIds, bosIds, unkId,
    stripsFirstSpace: dec.stripsFirstSpace, modelType, fileHash, hash,
  });
}

function readConfig(path: string): Json {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    throw new VocabularyError(path, '$', `cannot read the file (${(e as Error).message}); expected a readable tokenizer_config.json`);
  }
  const v = parseJson(text, path);
  if (!isObject(v)) throw new VocabularyError(path, '$', `expected an object, found ${typeName(v)}`);
  return v;
}

function checkId(v: unknown, file: string, path: string): number {
  if (typeof v !== 'number' || !Number.isInteger(v) || v < 0 || v >= MAX_VOCAB_SIZE) {
    throw new VocabularyError(file, path, `expected an integer id from 0 to ${MAX_VOCAB_SIZE - 1}, found ${typeName(v)}`);
  }
  return v;
}

function readModel(
  model: Json,
  file: string,
  pieces: (string | undefined)[],
  setUnk: (id: number) => void,
): ModelType {
  let type = model.type;
  if (type === undefined) {
    // Older files omit the type; Hugging Face infers it from the fields.
    if (Array.isArray(model.vocab)) type = 'Unigram';
    else if (model.merges !== undefined) type = 'BPE';
    else if (model.continuing_subword_prefix !== undefined && model.max_input_chars_per_word !== undefined) type = 'WordPiece';
    else throw new VocabularyError(file, '$.model.type', 'missing; expected BPE, Unigram or WordLevel (or WordPiece)');
  }
  if (type !== 'BPE' && type !== 'Unigram' && type !== 'WordPiece' && type !== 'WordLevel') {
    throw new VocabularyError(file, '$.model.type', `unsupported model ${show(type)}; expected BPE, Unigram or WordLevel (or WordPiece)`);
  }
  const vocab = model.vocab;
  if (type === 'Unigram') {
    if (!Array.isArray(vocab)) throw new VocabularyError(file, '$.model.vocab', `expected an array of [piece, score] pairs, found ${typeName(vocab)}`);
    if (vocab.length > MAX_VOCAB_SIZE) throw new VocabularyError(file, '$.model.vocab', `${vocab.length} entries; expected at most ${MAX_VOCAB_SIZE}`);
    for (let id = 0; id < vocab.length; id++) {
      const entry = vocab[id];
      if (!Array.isArray(entry) || entry.length !== 2 || typeof entry[0] !== 'string' || typeof entry[1] !== 'number') {
        throw new VocabularyError(file, pathKey('$.model.vocab', id), `expected a [piece, score] pair (string, number), found ${typeName(entry)}`);
      }
      pieces[id] = entry[0];
    }
    const unk = model.unk_id;
    if (unk !== undefined && unk !== null) {
      if (typeof unk !== 'number' || !Number.isInteger(unk) || unk < 0 || unk >= vocab.length) {
        throw new VocabularyError(file, '$.model.unk_id', `expected null or an index into $.model.vocab (0 to ${vocab.length - 1}), found ${typeName(unk)}`);
      }
      setUnk(unk);
    }
    return type;
  }
  if (!isObject(vocab)) throw new VocabularyError(file, '$.model.vocab', `expected an object mapping token strings to ids, found ${typeName(vocab)}`);
  for (const piece in vocab) {
    const id = vocab[piece];
    if (typeof id !== 'number' || !Number.isInteger(id) || id < 0 || id >= MAX_VOCAB_SIZE) checkId(id, file, pathKey('$.model.vocab', piece));
    const prev = pieces[id as number];
    if (prev !== undefined) {
      throw new VocabularyError(file, pathKey('$.model.vocab', piece), `duplicate id ${id} (also ${pathKey('$.model.vocab', prev)}); expected unique ids`);
    }
    pieces[id as number] = piece;
  }
  if (type === 'BPE') {
    const m = model.merges;
    if (m !== undefined && m !== null && !Array.isArray(m)) {
      throw new VocabularyError(file, '$.model.merges', `expected an array, found ${typeName(m)}`);
    }
  }
  const unk = model.unk_token;
  if (unk !== undefined && unk !== null) {
    if (typeof unk !== 'string') throw new VocabularyError(file, '$.model.unk_token', `expected null or a token string, found ${typeName(unk)}`);
    const id = Object.prototype.hasOwnProperty.call(vocab, unk) ? vocab[unk] : undefined;
    if (typeof id === 'number') setUnk(id);
  }
  return type;
}
