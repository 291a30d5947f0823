/**
 * Where treewright itself is installed, and its shipped grammars. Shipped names resolve relative to
 * the package, never to the working folder, so `--grammar sql` means the same from any folder.
 */
import { readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The package root (the folder holding package.json, grammars/ and src/), with a trailing separator. */
export const PACKAGE_ROOT = fileURLToPath(new URL('../../', import.meta.url));

const isFile = (path: string): boolean => {
  try {
    return statSync(path).isFile();
  } catch {
    return false;
  }
};

/** Names of the shipped grammars (grammars/NAME/NAME.twg in the package), sorted. */
export function shippedGrammars(): string[] {
  let entries: string[];
  try {
    entries = readdirSync(join(PACKAGE_ROOT, 'grammars'));
  } catch {
    return [];
  }
  return entries.filter((n) => /^[a-z][a-z0-9_-]*$/.test(n) && isFile(join(PACKAGE_ROOT, 'grammars', n, `${n}.twg`))).sort();
}

/**
 * The description file a grammar argument names: an existing file (a path, relative to the working
 * folder) as given; else a shipped name (`sql`) as the absolute path of grammars/sql/sql.twg in the
 * package; else null.
 */
export function grammarFile(value: string): string | null {
  if (isFile(value)) return value;
  if (/^[a-z][a-z0-9_-]*$/.test(value)) {
    const shipped = join(PACKAGE_ROOT, 'grammars', value, `${value}.twg`);
    if (isFile(shipped)) return shipped;
  }
  return null;
}
