/**
 * The description text each compiled grammar came from, kept beside it (a WeakMap, so a Grammar
 * stays plain data): later stages locate their messages in it (line and column) without reading
 * `grammar.file` from disk — for a description checked through the server that name is only a
 * label from a request, never a file to open.
 */
import type { Grammar } from './ir.ts';

const texts = new WeakMap<Grammar, string>();

/** Records `text` as the source of `grammar` (compileDescription does it; a copy sent between threads needs it again). */
export function rememberSource(grammar: Grammar, text: string): void {
  texts.set(grammar, text);
}

/** The text `grammar` was compiled from, when known. */
export function sourceText(grammar: Grammar): string | undefined {
  return texts.get(grammar);
}
