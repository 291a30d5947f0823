/**
 * Loading a seq2seq model folder: config.json, the tokenizer, the ONNX sessions; every check that
 * can fail is done here, before any decoding starts.
 */
import { existsSync, readFileSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';
import type * as ort from 'onnxruntime-node';
import type { Tokenizer } from '@huggingface/tokenizers';
import { onnxRuntime } from '../util/optional.ts';
import { loadVocabulary, type Vocabulary } from '../vocab/index.ts';
import { InputTooLong, ModelError, OutputTooLong, errors } from './errors.ts';
import { DecoderRun } from './run.ts';

export interface ModelConfig {
  readonly encoderLayers: number;
  readonly decoderLayers: number;
  readonly heads: number;
  readonly dKv: number;
  readonly dModel: number;
  readonly vocabSize: number;
  readonly padId: number;
  readonly eosIds: readonly number[];
  readonly decoderStartId: number;
  /** Longest decoder sequence the model supports (max_position_embeddings, else n_positions, else 512). */
  readonly maxPositions: number;
  /** `treewright.prefixes` of config.json: the text put before a question per target grammar name */
  readonly prefixes: Readonly<Record<string, string>>;
}

export interface LoadModelOptions {
  /** onnxruntime intra-op threads (default: onnxruntime's choice). */
  threads?: number;
  /**
   * Let onnxruntime's worker threads spin-wait for work between calls (default false: they sleep).
   * Spinning keeps a core busy after every decoder call; on a machine with few cores (or shared
   * with other jobs) that core is taken from the decoding thread itself — its masks, logits and
   * beam bookkeeping run between two calls — so by default the workers sleep (see
   * docs/design/decode-loop.md).
   */
  spinning?: boolean;
  /** Ignore decoder_model_merged.onnx and decode without cache from decoder_model.onnx. */
  noCache?: boolean;
}

/** A question made ready for the encoder (see Seq2SeqModel.input). */
export interface ModelInput {
  /** the text the encoder reads: prefix + question */
  readonly text: string;
  /** its token ids (what `start` takes) */
  readonly ids: number[];
  /** the prefix that was put before the question ('' when the question already began with it) */
  readonly prefix: string;
}

function readJson(file: string): Record<string, unknown> {
  if (!existsSync(file)) throw errors.missingFile(file);
  let value: unknown;
  try {
    value = JSON.parse(readFileSync(file, 'utf8'));
  } catch (e) {
    throw errors.badJson(file, (e as Error).message);
  }
  if (value === null || typeof value !== 'object' || Array.isArray(value)) throw errors.badJson(file, 'the top level is not an object');
  return value as Record<string, unknown>;
}

/** The prefix rule of Seq2SeqModel.prefixFor, on a config read without loading the model. */
export function prefixFor(config: ModelConfig, grammarName: string): string {
  return config.prefixes[grammarName] ?? `to ${grammarName}: `;
}

/** Reads and checks `<dir>/config.json` alone (no tokenizer, no ONNX sessions). */
export function readModelConfig(dir: string): ModelConfig {
  return readConfig(join(dir, 'config.json'));
}

function readConfig(file: string): ModelConfig {
  const c = readJson(file);
  const int = (key: string, fallback?: number): number => {
    const v = c[key] ?? fallback;
    if (typeof v !== 'number' || !Number.isInteger(v) || v < 0) throw errors.badConfigField(file, key, c[key], 'a non-negative integer');
    return v;
  };
  if (c.is_encoder_decoder !== true) throw errors.badConfigField(file, 'is_encoder_decoder', c.is_encoder_decoder, 'true (a seq2seq model)');
  const eosRaw = c.eos_token_id;
  const eosIds = Array.isArray(eosRaw) ? eosRaw : [eosRaw];
  if (eosIds.length === 0 || !eosIds.every((x) => typeof x === 'number' && Number.isInteger(x) && x >= 0)) {
    throw errors.badConfigField(file, 'eos_token_id', eosRaw, 'a token id or a list of token ids');
  }
  const tw = c.treewright as { prefixes?: unknown } | undefined;
  const prefixes: Record<string, string> = {};
  if (tw !== undefined && tw !== null && typeof tw === 'object' && tw.prefixes !== undefined) {
    const p = tw.prefixes;
    if (p === null || typeof p !== 'object' || Array.isArray(p)) throw errors.badConfigField(file, 'treewright.prefixes', p, 'an object mapping grammar names to prefix strings');
    for (const [k, v] of Object.entries(p)) {
      if (typeof v !== 'string') throw errors.badConfigField(file, `treewright.prefixes.${k}`, v, 'a string');
      prefixes[k] = v;
    }
  }
  const encoderLayers = int('num_layers');
  const padId = int('pad_token_id');
  return {
    encoderLayers,
    decoderLayers: int('num_decoder_layers', encoderLayers),
    heads: int('num_heads'),
    dKv: int('d_kv'),
    dModel: int('d_model'),
    vocabSize: int('vocab_size'),
    padId,
    eosIds: eosIds as number[],
    decoderStartId: int('decoder_start_token_id', padId),
    maxPositions: int('max_position_embeddings', typeof c.n_positions === 'number' ? c.n_positions : 512),
    prefixes,
  };
}

async function session(file: string, threads: number | undefined, spinning: boolean): Promise<ort.InferenceSession> {
  if (!existsSync(file)) throw errors.missingFile(file);
  const runtime = onnxRuntime(); // a MissingPackageError of its own when onnxruntime-node is absent
  try {
    const opts: ort.InferenceSession.SessionOptions = { graphOptimizationLevel: 'all' };
    // onnxruntime session config keys session.intra_op.allow_spinning / session.inter_op.allow_spinning
    // (onnxruntime_session_options_config_keys.h); the Node binding takes them as `extra` strings
    const spin = spinning ? '1' : '0';
    opts.extra = { session: { intra_op: { allow_spinning: spin }, inter_op: { allow_spinning: spin } } };
    if (threads !== undefined) {
      opts.intraOpNumThreads = threads;
      opts.interOpNumThreads = 1;
    }
    return await runtime.InferenceSession.create(file, opts);
  } catch (e) {
    throw errors.badOnnx(file, (e as Error).message.replace(/\s+/g, ' ').trim());
  }
}

function requireNames(file: string, s: ort.InferenceSession, inputs: readonly string[], outputs: readonly string[]): void {
  for (const n of inputs) if (!s.inputNames.includes(n)) throw errors.missingInput(file, n, s.inputNames);
  for (const n of outputs) if (!s.outputNames.includes(n)) throw errors.missingOutput(file, n, s.outputNames);
}

/**
 * A loaded seq2seq model: tokenizer, vocabulary index and ONNX sessions. Immutable after loading;
 * each question gets its own `DecoderRun` (see `start`).
 */
export class Seq2SeqModel {
  constructor(
    /** absolute path of the folder */
    readonly dir: string,
    readonly config: ModelConfig,
    /**
     * the tokenizer (used to encode questions): @huggingface/tokenizers, the library whose Tokenizer
     * transformers.js itself wraps — its `encode(text).ids` are transformers.js' `tokenizer.encode(text)`
     */
    readonly tokenizer: Tokenizer,
    /** the token byte strings (used for output text and by token masks) */
    readonly vocabulary: Vocabulary,
    readonly encoder: ort.InferenceSession,
    readonly decoder: ort.InferenceSession,
    /** true when `decoder` is decoder_model_merged.onnx (KV cache); false for decoder_model.onnx */
    readonly cached: boolean,
    /** the logits dimension, equal to vocabulary.vocabSize (checked when loading) */
    readonly vocabSize: number,
  ) {}

  /** File name of the decoder graph in use, relative to the folder. */
  get decoderFile(): string {
    return this.cached ? 'onnx/decoder_model_merged.onnx' : 'onnx/decoder_model.onnx';
  }

  /**
   * The text put before a question for a target grammar: config.json's `treewright.prefixes[name]`,
   * else `"to <name>: "` (the shipped model's convention; `treewright evaluate` uses the same rule).
   */
  prefixFor(grammarName: string): string {
    return prefixFor(this.config, grammarName);
  }

  /** Token ids of a question, as the tokenizer encodes it (EOS appended by its template). */
  encodeQuestion(question: string): number[] {
    return this.tokenizer.encode(question, { add_special_tokens: true }).ids;
  }

  /**
   * The encoder's input for a question aimed at a target grammar: `prefix + question`, where the
   * prefix is the one given, else `prefixFor(target)`; not repeated when the question already
   * starts with it. Throws InputTooLong when the tokens exceed the encoder's positions.
   */
  input(question: string, target: string, prefix: string = this.prefixFor(target)): ModelInput {
    const put = question.startsWith(prefix) ? '' : prefix;
    const text = put + question;
    const ids = this.encodeQuestion(text);
    if (ids.length > this.config.maxPositions) throw new InputTooLong(ids.length, this.config.maxPositions, prefix);
    return { text, ids, prefix: put };
  }

  /** The most tokens one output may have, end of sequence included: the decoder's positions − 1 (its start token takes one). */
  get maxOutputTokens(): number {
    return this.config.maxPositions - 1;
  }

  /**
   * Checks a requested number of tokens to generate against maxOutputTokens (OutputTooLong);
   * without one, the default: 128, or fewer when the model holds fewer.
   */
  outputLimit(requested?: number): number {
    if (requested === undefined) return Math.min(128, this.maxOutputTokens);
    if (requested > this.maxOutputTokens) throw new OutputTooLong(requested, this.maxOutputTokens);
    return requested;
  }

  /**
   * Runs the encoder on a question (text as given, or token ids) and returns a decoding run (one
   * sequence, batch grows for beams). Throws InputTooLong past the encoder's positions.
   */
  async start(question: string | readonly number[]): Promise<DecoderRun> {
    const ids = typeof question === 'string' ? this.encodeQuestion(question) : question;
    if (ids.length > this.config.maxPositions) throw new InputTooLong(ids.length, this.config.maxPositions, '');
    return DecoderRun.create(this, ids);
  }

  async dispose(): Promise<void> {
    await this.encoder.release();
    await this.decoder.release();
  }
}

/**
 * Loads a model folder in the standard seq2seq layout. Throws a `ModelError` naming the file for a
 * missing or corrupt piece, a graph without the expected inputs/outputs, or a tokenizer whose size
 * differs from the logits dimension.
 */
export async function loadModel(dir: string, options: LoadModelOptions = {}): Promise<Seq2SeqModel> {
  const abs = resolve(dir);
  if (!existsSync(abs) || !statSync(abs).isDirectory()) throw errors.notAFolder(dir);
  const config = readConfig(join(dir, 'config.json'));
  const tokFile = join(dir, 'tokenizer.json');
  if (!existsSync(tokFile)) throw errors.missingFile(tokFile);
  if (!existsSync(join(dir, 'tokenizer_config.json'))) throw errors.missingFile(join(dir, 'tokenizer_config.json'));
  const vocabulary = loadVocabulary(tokFile);

  const encFile = join(dir, 'onnx', 'encoder_model.onnx');
  const mergedFile = join(dir, 'onnx', 'decoder_model_merged.onnx');
  const plainFile = join(dir, 'onnx', 'decoder_model.onnx');
  const cached = !options.noCache && existsSync(mergedFile);
  if (!cached && !existsSync(plainFile)) throw errors.missingDecoder(dir);
  const decFile = cached ? mergedFile : plainFile;

  const encoder = await session(encFile, options.threads, options.spinning ?? false);
  requireNames(encFile, encoder, ['input_ids'], ['last_hidden_state']);
  const decoder = await session(decFile, options.threads, options.spinning ?? false);
  requireNames(decFile, decoder, ['input_ids', 'encoder_hidden_states'], ['logits']);
  if (cached) {
    const want: string[] = [];
    const out: string[] = [];
    for (let i = 0; i < config.decoderLayers; i++) {
      for (const kv of ['key', 'value']) {
        want.push(`past_key_values.${i}.decoder.${kv}`);
        out.push(`present.${i}.decoder.${kv}`);
      }
    }
    requireNames(decFile, decoder, want, out);
  }

  const logitsMeta = decoder.outputMetadata.find((m) => m.name === 'logits');
  const declared = logitsMeta && logitsMeta.isTensor ? logitsMeta.shape[2] : undefined;
  let logitsDim: number;
  if (typeof declared === 'number') logitsDim = declared;
  else {
    // a symbolic vocabulary dimension: one probe step on a one-token input tells the real size
    const probe = new Seq2SeqModel(abs, config, null as never, vocabulary, encoder, decoder, cached, config.vocabSize);
    const run = await probe.start([config.eosIds[0]]);
    logitsDim = (await run.step([config.decoderStartId], null)).length;
  }
  if (logitsDim !== config.vocabSize) {
    throw errors.badConfigField(join(dir, 'config.json'), 'vocab_size', config.vocabSize, `${logitsDim}, the logits dimension of ${decFile}`);
  }
  if (vocabulary.vocabSize !== logitsDim) throw errors.vocabMismatch(tokFile, vocabulary.vocabSize, decFile, logitsDim);

  // The tokenizer transformers.js' AutoTokenizer builds (its encode() is this Tokenizer's), without
  // loading transformers.js itself (a few hundred milliseconds of start-up).
  const tokenizerJson = readJson(tokFile);
  const tokenizerConfig = readJson(join(dir, 'tokenizer_config.json'));
  const { Tokenizer } = await import('@huggingface/tokenizers');
  let tokenizer: Tokenizer;
  try {
    tokenizer = new Tokenizer(tokenizerJson, tokenizerConfig);
  } catch (e) {
    throw errors.tokenizer(dir, (e as Error).message);
  }
  return new Seq2SeqModel(abs, config, tokenizer, vocabulary, encoder, decoder, cached, logitsDim);
}

export { ModelError };
