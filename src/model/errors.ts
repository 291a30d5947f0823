/**
 * The model loader's error catalogue: one factory per condition. Every message starts with the
 * file (and JSON path when the problem is inside a JSON file), says what was found and what was
 * expected, and ends with a hint.
 */

export class ModelError extends Error {
  /** The file (or folder) the message is about. */
  readonly file: string;
  constructor(file: string, message: string) {
    super(`${file}: ${message}`);
    this.name = 'ModelError';
    this.file = file;
  }
}

/**
 * A question whose model input (prefix included) has more tokens than the encoder has positions:
 * onnxruntime would fail on it, so the model stage refuses it first.
 */
export class InputTooLong extends RangeError {
  override readonly name = 'InputTooLong';
  constructor(
    /** tokens of the input, as the tokenizer encodes it (end of sequence included) */
    readonly tokens: number,
    /** the encoder's positions */
    readonly limit: number,
    /** the prefix put before the question ('' when none) */
    readonly prefix: string,
  ) {
    super(`the input has ${tokens} tokens (with the prefix ${JSON.stringify(prefix)}); expected at most ${limit}, the encoder's positions`);
  }
}

/** A number of tokens to generate that the model cannot hold (its positions − 1, for the decoder start token). */
export class OutputTooLong extends RangeError {
  override readonly name = 'OutputTooLong';
  constructor(
    readonly requested: number,
    readonly limit: number,
  ) {
    super(`${requested} tokens to generate; expected at most ${limit}, the decoder's positions − 1`);
  }
}

const LAYOUT_HINT =
  'a seq2seq model folder holds config.json, tokenizer.json, tokenizer_config.json, ' +
  'onnx/encoder_model.onnx and onnx/decoder_model_merged.onnx (or onnx/decoder_model.onnx)';

export const errors = {
  notAFolder: (dir: string) => new ModelError(dir, `not a folder; expected a model folder (${LAYOUT_HINT})`),
  missingFile: (file: string) => new ModelError(file, `file is missing; expected it in the model folder (${LAYOUT_HINT})`),
  missingDecoder: (dir: string) =>
    new ModelError(
      `${dir}/onnx`,
      'neither decoder_model_merged.onnx nor decoder_model.onnx is present; expected one of them ' +
        '(decoder_model_merged.onnx gives cached decoding)',
    ),
  badJson: (file: string, detail: string) => new ModelError(file, `malformed JSON (${detail}); expected a JSON object`),
  badConfigField: (file: string, key: string, found: unknown, expected: string) =>
    new ModelError(file, `at $.${key}: found ${JSON.stringify(found) ?? 'nothing'}; expected ${expected}`),
  badOnnx: (file: string, detail: string) =>
    new ModelError(file, `not a loadable ONNX model (onnxruntime: ${detail}); expected an ONNX file exported for this folder's config.json`),
  missingInput: (file: string, name: string, have: readonly string[]) =>
    new ModelError(file, `the graph has no input "${name}"; expected it among the inputs (the graph has: ${have.join(', ')})`),
  missingOutput: (file: string, name: string, have: readonly string[]) =>
    new ModelError(file, `the graph has no output "${name}"; expected it among the outputs (the graph has: ${have.join(', ')})`),
  vocabMismatch: (tokenizerFile: string, tokens: number, decoderFile: string, logits: number) =>
    new ModelError(
      tokenizerFile,
      `at $.model.vocab: the tokenizer has ${tokens} tokens (added tokens included) but the logits of ${decoderFile} ` +
        `have ${logits} entries; expected equal sizes — the tokenizer does not belong to this model`,
    ),
  tokenizer: (dir: string, detail: string) =>
    new ModelError(`${dir}/tokenizer.json`, `@huggingface/tokenizers could not load the tokenizer (${detail}); expected a Hugging Face tokenizer.json and its tokenizer_config.json`),
  constraintSize: (what: string, constraintSize: number, modelSize: number) =>
    new ModelError(what, `the token constraint covers ${constraintSize} token ids but the model has ${modelSize}; expected a constraint built from this model's tokenizer.json`),
};
