/**
 * Worker thread that compiles descriptions for /api/check, so a large description does not hold the
 * server's main thread (see checker.ts). Messages: {ready} once loaded, then {id, text, file} → {id, grammar, diagnostics}.
 */
import { parentPort } from 'node:worker_threads';
import { compileDescription } from '../description/index.ts';

parentPort!.on('message', (m: { id: number; text: string; file: string }) => {
  const r = compileDescription(m.text, m.file);
  parentPort!.postMessage({ id: m.id, grammar: r.grammar, diagnostics: r.diagnostics });
});
// one small compile first builds the notation's parser in this thread, then the checker starts its
// time limits (starting a thread, its loader and that parser takes about a second)
compileDescription('grammar warm\nstart S\nspace " "\nsort S { one() = "1"; }\n', 'warm-up.twg');
parentPort!.postMessage({ ready: true });
