// Builds the package: TypeScript sources (src/) → ES modules with .d.ts types (dist/), by
// TypeScript's own emit (.build/tsconfig.json; relative `.ts` imports rewritten to `.js`), plus the
// files tsc does not copy: plain JavaScript modules started as child processes and the server's
// page; and the shipped grammars' parsers compiled ahead (dist/tree/parsers.json). Run by `npm install` in the repository (prepare) and before `npm pack`.
import { spawnSync } from 'node:child_process';
import { chmodSync, cpSync, existsSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const dist = join(root, 'dist');
const require = createRequire(import.meta.url);

rmSync(dist, { recursive: true, force: true });
// all output on stderr: `npm pack --json` prints its JSON on stdout after this script ran
const tsc = spawnSync(process.execPath, [require.resolve('typescript/bin/tsc'), '-p', join(root, '.build', 'tsconfig.json')], { stdio: ['ignore', 2, 2] });
if (tsc.status !== 0) {
  console.error('build: tsc failed');
  process.exit(tsc.status ?? 1);
}

// Declarations keep the sources' `.ts` specifiers; a consumer's compiler expects `.js` ones.
const relativeTs = /((?:from|import)\s*\(?\s*['"])(\.{1,2}\/[^'"]*?)\.ts(['"])/g;
function rewriteDeclarations(dir) {
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    if (e.isDirectory()) rewriteDeclarations(p);
    else if (e.name.endsWith('.d.ts')) {
      const text = readFileSync(p, 'utf8');
      const out = text.replace(relativeTs, '$1$2.js$3');
      if (out !== text) writeFileSync(p, out);
    }
  }
}
rewriteDeclarations(dist);

// Not TypeScript: the SQL executor's child process and the playground page.
cpSync(join(root, 'src', 'exec', 'sql-child.mjs'), join(dist, 'exec', 'sql-child.mjs'));
cpSync(join(root, 'src', 'server', 'page'), join(dist, 'server', 'page'), { recursive: true });
chmodSync(join(dist, 'cli', 'bin.js'), 0o755);

// The shipped grammars' parsers, compiled now instead of at each start (see src/tree/parse.ts):
// ohm's recipes keyed by the SHA-256 of each generated parser text, read by the compiled parse.js.
const { loadGrammar } = await import(pathToFileURL(join(dist, 'description', 'index.js')).href);
const { parserRecipes } = await import(pathToFileURL(join(dist, 'tree', 'parse.js')).href);
const shipped = readdirSync(join(root, 'grammars'), { withFileTypes: true })
  .filter((e) => e.isDirectory() && existsSync(join(root, 'grammars', e.name, `${e.name}.twg`)))
  .map((e) => loadGrammar(join(root, 'grammars', e.name, `${e.name}.twg`)));
writeFileSync(join(dist, 'tree', 'parsers.json'), JSON.stringify(parserRecipes(shipped)));
console.error('build: dist/ written');
