/**
 * The heavy packages, loaded on first use instead of at import time, so that the library's core
 * (`import … from 'treewright'`: descriptions, trees, masks, vocabularies) starts without them and
 * works when they are not installed:
 * - better-sqlite3 (native; reading and building SQLite files), an optional dependency;
 * - onnxruntime-node (native; running the ONNX model), an optional dependency.
 * Both are CommonJS packages, so `require` loads them synchronously at the call that needs them.
 * A missing package is a `MissingPackageError` naming the package and what needed it.
 */
import { createRequire } from 'node:module';
import type BetterSqlite3 from 'better-sqlite3';
import type * as Ort from 'onnxruntime-node';

const require = createRequire(import.meta.url);

/** A feature needs an optional package that is not installed. */
export class MissingPackageError extends Error {
  override readonly name = 'MissingPackageError';
  constructor(
    readonly packageName: string,
    purpose: string,
  ) {
    super(`${purpose} needs the package ${packageName}, which is not installed; install it with \`npm install ${packageName}\` (an optional dependency of treewright)`);
  }
}

function load<T>(name: string, purpose: string): T {
  try {
    return require(name) as T;
  } catch (err) {
    const e = err as NodeJS.ErrnoException;
    if (e.code === 'MODULE_NOT_FOUND' && e.message.includes(`'${name}'`)) throw new MissingPackageError(name, purpose);
    throw err;
  }
}

let sqliteModule: typeof BetterSqlite3 | undefined;
let ortModule: typeof Ort | undefined;

/** better-sqlite3's `Database` class. */
export function sqlite(): typeof BetterSqlite3 {
  return (sqliteModule ??= load<typeof BetterSqlite3>('better-sqlite3', 'reading or building a SQLite database'));
}

/** onnxruntime-node's module namespace. */
export function onnxRuntime(): typeof Ort {
  return (ortModule ??= load<typeof Ort>('onnxruntime-node', 'running an ONNX model'));
}
