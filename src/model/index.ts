/**
 * model/ — runs a seq2seq model exported in the standard ONNX folder layout (the one
 * @huggingface/transformers loads for encoder–decoder models) on CPU with onnxruntime-node.
 *
 * Produces: a `Seq2SeqModel` (config, tokenizer (@huggingface/tokenizers), vocabulary index, sessions) and,
 * per question, a `DecoderRun` whose `step(tokens, parents)` returns next-token logits for a batch
 * of hypotheses, keeping the KV cache (reordered along the batch for beam search).
 *
 * Example:
 *   const model = await loadModel('models/coop');
 *   const run = await model.start('lf: which orchards grow elstar?');
 *   const logits = await run.step([model.config.decoderStartId], null);   // Float32Array [1 × V]
 *
 * Layout: config.json (model_type "t5", is_encoder_decoder, num_layers, num_decoder_layers,
 * num_heads, d_kv, d_model, vocab_size, pad/eos/decoder_start ids), tokenizer.json +
 * tokenizer_config.json, onnx/encoder_model.onnx (input_ids, attention_mask → last_hidden_state),
 * onnx/decoder_model_merged.onnx (input_ids, encoder_attention_mask, encoder_hidden_states,
 * use_cache_branch, past_key_values.{i}.decoder|encoder.key|value → logits, present.*), or only
 * onnx/decoder_model.onnx (no cache; every step re-runs the whole prefix).
 *
 * Cost per cached step: one decoder call on [rows × 1] tokens; reordering beams copies the
 * self-attention cache (rows × layers × 2 × heads × length × d_kv floats). Loading checks every
 * file, the graph's input/output names and that the tokenizer's size equals the logits dimension.
 * Input and length checks live here: `model.input(question, target, prefix?)` puts the target's prefix
 * before the question (not twice) and refuses an input longer than the encoder's positions
 * (InputTooLong); `model.outputLimit(n?)` gives the default number of tokens to generate and
 * refuses more than the decoder's positions allow (OutputTooLong). `start` checks the input too.
 *
 * Limits: batch of one question; the question must fit the model's positions; float32 graphs only.
 */
export { loadModel, prefixFor, readModelConfig, Seq2SeqModel, type ModelConfig, type LoadModelOptions, type ModelInput } from './load.ts';
export { DecoderRun, type RunnableModel } from './run.ts';
export { ModelError, InputTooLong, OutputTooLong } from './errors.ts';
