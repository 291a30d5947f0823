/**
 * Which ids of a tokenizer.json are byte-fallback tokens: pieces `<0xNN>` that the tokenizer's
 * decoder turns into the single byte NN (its `ByteFallback` step). Their bytes equal those of an
 * ordinary one-character token (`<0x61>` and `a` are both the byte 0x61), so a screen that lists
 * tokens by text needs this to tell them apart. The Vocabulary keeps bytes only, so this reads the
 * pieces again; call it once per tokenizer.
 */
import { compileDecoder } from './decoder.ts';

const BYTE_PIECE = /^<0x[0-9A-Fa-f]{2}>$/;

/** The byte-fallback ids of a parsed tokenizer.json (empty when its decoder has no ByteFallback). */
export function byteFallbackIds(json: unknown, file: string): Set<number> {
  const ids = new Set<number>();
  if (json === null || typeof json !== 'object') return ids;
  const j = json as { decoder?: unknown; model?: { vocab?: unknown } };
  if (j.decoder === undefined || j.decoder === null || !compileDecoder(j.decoder, file).byteFallback) return ids;
  const vocab = j.model?.vocab;
  if (Array.isArray(vocab)) {
    vocab.forEach((entry, id) => {
      if (Array.isArray(entry) && typeof entry[0] === 'string' && BYTE_PIECE.test(entry[0])) ids.add(id);
    });
  } else if (vocab !== null && typeof vocab === 'object') {
    for (const [piece, id] of Object.entries(vocab as Record<string, unknown>)) {
      if (typeof id === 'number' && BYTE_PIECE.test(piece)) ids.add(id);
    }
  }
  return ids;
}
