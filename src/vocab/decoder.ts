/**
 * Turns a tokenizer.json `decoder` into a per-token rule: token piece → the exact bytes the token
 * contributes when it stands in the middle of a decoded text, plus what happens to the first token.
 *
 * Supported decoder types: ByteLevel, Metaspace, Replace (string pattern), ByteFallback, Fuse,
 * Strip, WordPiece, BPEDecoder, Sequence of these, and no decoder at all (pieces joined with one
 * space, as Hugging Face tokenizers do). Anything else is a VocabularyError naming the field.
 */
import { VocabularyError, typeName } from './errors.ts';
import { pathKey, show } from '../util/json.ts';

/** GPT-2's byte ↔ unicode table (from memory of the GPT-2 `bytes_to_unicode` function). */
function byteLevelTable(): Map<number, number> {
  const map = new Map<number, number>(); // code point → byte
  const printable: number[] = [];
  for (let b = 0x21; b <= 0x7e; b++) printable.push(b);
  for (let b = 0xa1; b <= 0xac; b++) printable.push(b);
  for (let b = 0xae; b <= 0xff; b++) printable.push(b);
  const isPrintable = new Set(printable);
  for (const b of printable) map.set(b, b);
  let next = 0;
  for (let b = 0; b < 256; b++) {
    if (!isPrintable.has(b)) map.set(256 + next++, b);
  }
  return map;
}

export const BYTE_LEVEL_CHAR_TO_BYTE: ReadonlyMap<number, number> = byteLevelTable();

type Step =
  | { kind: 'replace'; from: string; to: string }
  | { kind: 'byteFallback' }
  | { kind: 'byteLevel' }
  | { kind: 'metaspace'; replacement: string }
  | { kind: 'wordPiece'; prefix: string }
  | { kind: 'bpeSuffix'; suffix: string }
  | { kind: 'strip'; content: string; start: number; stop: number };

/** A compiled decoder. */
export interface TokenDecoder {
  /**
   * Writes the bytes of one token in mid-text position into `out` at `pos` and returns the new
   * position. `out` must have room for 3 × piece.length + 1 bytes. `added`: an added token (skips
   * ByteLevel).
   */
  write(piece: string, added: boolean, out: Buffer, pos: number): number;
  /** True when decoding drops one leading space of the whole text (see index.ts). */
  readonly stripsFirstSpace: boolean;
  /** Whether `<0xNN>` pieces become single bytes. */
  readonly byteFallback: boolean;
}

const BYTE_TOKEN = /^<0x([0-9A-Fa-f]{2})>$/;

/** BYTE_LEVEL_CHAR_TO_BYTE as a table over UTF-16 code units (all its characters are < 0x200); -1: none. */
const BYTE_LEVEL_TABLE: Int16Array = (() => {
  const t = new Int16Array(0x200).fill(-1);
  for (const [c, b] of BYTE_LEVEL_CHAR_TO_BYTE) t[c] = b;
  return t;
})();

export function compileDecoder(spec: unknown, file: string, path = '$.decoder'): TokenDecoder {
  const steps: Step[] = [];
  let stripsFirstSpace = false;
  let fused = false;

  const str = (obj: Record<string, unknown>, key: string, p: string, dflt?: string): string => {
    const v = obj[key];
    if (v === undefined && dflt !== undefined) return dflt;
    if (typeof v !== 'string') throw new VocabularyError(file, pathKey(p, key), `expected a string, found ${typeName(v)}`);
    return v;
  };
  const int = (obj: Record<string, unknown>, key: string, p: string, dflt: number): number => {
    const v = obj[key];
    if (v === undefined || v === null) return dflt;
    if (typeof v !== 'number' || !Number.isInteger(v) || v < 0 || v > 1000) {
      throw new VocabularyError(file, pathKey(p, key), `expected a small non-negative integer, found ${typeName(v)}`);
    }
    return v;
  };
  const bool = (obj: Record<string, unknown>, key: string, p: string, dflt: boolean): boolean => {
    const v = obj[key];
    if (v === undefined || v === null) return dflt;
    if (typeof v !== 'boolean') throw new VocabularyError(file, pathKey(p, key), `expected true or false, found ${typeName(v)}`);
    return v;
  };

  const add = (d: unknown, p: string): void => {
    if (d === null || typeof d !== 'object' || Array.isArray(d)) {
      throw new VocabularyError(file, p, `expected a decoder object, found ${typeName(d)}`);
    }
    const o = d as Record<string, unknown>;
    const type = o.type;
    switch (type) {
      case 'Sequence': {
        const list = o.decoders;
        if (!Array.isArray(list)) throw new VocabularyError(file, pathKey(p, 'decoders'), `expected an array of decoders, found ${typeName(list)}`);
        list.forEach((x, i) => add(x, pathKey(pathKey(p, 'decoders'), i)));
        return;
      }
      case 'ByteLevel':
        steps.push({ kind: 'byteLevel' });
        return;
      case 'ByteFallback':
        steps.push({ kind: 'byteFallback' });
        return;
      case 'Fuse':
        fused = true;
        return;
      case 'Replace': {
        const pat = o.pattern;
        const pp = pathKey(p, 'pattern');
        if (pat === null || typeof pat !== 'object' || Array.isArray(pat)) throw new VocabularyError(file, pp, `expected {"String": …}, found ${typeName(pat)}`);
        const po = pat as Record<string, unknown>;
        if (!('String' in po)) {
          throw new VocabularyError(file, pp, `unsupported pattern ${show(pat)}; expected {"String": "…"} (regex patterns in decoders are not supported)`);
        }
        const from = str(po, 'String', pp);
        if (from === '') throw new VocabularyError(file, pathKey(pp, 'String'), 'expected a non-empty string');
        steps.push({ kind: 'replace', from, to: str(o, 'content', p) });
        return;
      }
      case 'Metaspace': {
        const replacement = str(o, 'replacement', p, '\u2581');
        if ([...replacement].length !== 1) throw new VocabularyError(file, pathKey(p, 'replacement'), `expected one character, found ${show(replacement)}`);
        steps.push({ kind: 'metaspace', replacement });
        // Hugging Face tokenizers drop the first token's leading space unless the prefix space is
        // never added (prepend_scheme "never" / add_prefix_space false; from memory of the Rust source).
        const scheme = o.prepend_scheme;
        if (scheme !== undefined && scheme !== 'always' && scheme !== 'first' && scheme !== 'never') {
          throw new VocabularyError(file, pathKey(p, 'prepend_scheme'), `unsupported value ${show(scheme)}; expected "always", "first" or "never"`);
        }
        const addPrefix = bool(o, 'add_prefix_space', p, true);
        if (scheme !== 'never' && addPrefix) stripsFirstSpace = true;
        return;
      }
      case 'WordPiece': {
        steps.push({ kind: 'wordPiece', prefix: str(o, 'prefix', p, '##') });
        stripsFirstSpace = true;
        return;
      }
      case 'BPEDecoder': {
        const suffix = str(o, 'suffix', p, '</w>');
        if (suffix !== '') steps.push({ kind: 'bpeSuffix', suffix });
        return;
      }
      case 'Strip': {
        const content = str(o, 'content', p, ' ');
        if ([...content].length !== 1) throw new VocabularyError(file, pathKey(p, 'content'), `expected one character, found ${show(content)}`);
        const start = int(o, 'start', p, 0);
        const stop = int(o, 'stop', p, 0);
        if (fused) {
          // Applies to the whole text once: only "drop one leading space" can be expressed per token.
          if (stop !== 0) throw new VocabularyError(file, pathKey(p, 'stop'), `unsupported: stripping the end of the whole text; expected 0, found ${stop}`);
          if (start === 0) return;
          if (content !== ' ' || start !== 1) {
            throw new VocabularyError(file, p, `unsupported Strip of ${start} × ${show(content)} from the whole text; expected content " " and start 1`);
          }
          stripsFirstSpace = true;
          return;
        }
        steps.push({ kind: 'strip', content, start, stop });
        return;
      }
      default:
        throw new VocabularyError(
          file,
          pathKey(p, 'type'),
          `unsupported decoder ${show(type)}; expected ByteLevel, Metaspace, Replace, ByteFallback, Fuse, Strip, WordPiece, BPEDecoder or Sequence`,
        );
    }
  };

  let joinWithSpace = false;
  if (spec === null || spec === undefined) joinWithSpace = true;
  else add(spec, path);
  if (joinWithSpace) stripsFirstSpace = true;
  const byteFallback = steps.some((s) => s.kind === 'byteFallback');

  const onlyByteLevel = steps.length === 1 && steps[0].kind === 'byteLevel' && !joinWithSpace;

  const write = (piece: string, added: boolean, out: Buffer, pos: number): number => {
    if (onlyByteLevel && !added) {
      const p = byteLevel(piece, out, pos);
      if (p >= 0) return p;
      return pos + out.write(piece, pos, 'utf8');
    }
    let s = piece;
    for (const step of steps) {
      switch (step.kind) {
        case 'replace':
          s = s.split(step.from).join(step.to);
          break;
        case 'byteFallback': {
          const m = BYTE_TOKEN.exec(s);
          if (m) {
            out[pos] = parseInt(m[1], 16);
            return pos + 1;
          }
          break;
        }
        case 'byteLevel': {
          if (added) break;
          // A piece with characters outside the table is kept as its own UTF-8 (Rust tokenizers' rule, from memory).
          const p = byteLevel(s, out, pos);
          if (p >= 0) return p;
          break;
        }
        case 'metaspace':
          s = s.split(step.replacement).join(' ');
          break;
        case 'wordPiece':
          s = s.startsWith(step.prefix) ? s.slice(step.prefix.length) : ' ' + s;
          break;
        case 'bpeSuffix':
          s = s.split(step.suffix).join(' ');
          break;
        case 'strip': {
          const chars = [...s];
          let a = 0;
          while (a < step.start && a < chars.length && chars[a] === step.content) a++;
          let z = chars.length;
          while (chars.length - z < step.stop && z > a && chars[z - 1] === step.content) z--;
          s = chars.slice(a, z).join('');
          break;
        }
      }
    }
    if (joinWithSpace) out[pos++] = 0x20;
    return pos + out.write(s, pos, 'utf8');
  };
  return { write, stripsFirstSpace, byteFallback };
}

/** Maps every code unit of `s` through the byte-level table into out[pos…]; -1 if one is not in it. */
function byteLevel(s: string, out: Buffer, pos: number): number {
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    const v = c < 0x200 ? BYTE_LEVEL_TABLE[c] : -1;
    if (v < 0) return -1;
    out[pos + i] = v;
  }
  return pos + s.length;
}
