/**
 * The package as a user gets it: `npm pack` (which builds dist/ through `prepare`), then the tarball
 * installed into fresh temporary projects by npm itself, and used from plain Node (no tsx):
 *
 * 1. light: `npm install TARBALL --omit=optional --omit=peer` leaves out onnxruntime-node,
 *    @huggingface/transformers (peers) and better-sqlite3 (optional); fastify (a plain dependency)
 *    is then deleted too, so that none of the heavy packages is there; the core still loads, compiles masks, parses and prints, the `treewright` bin checks a description, a
 *    SQLite feature says which package it needs, and a TypeScript consumer type-checks against the
 *    shipped .d.ts (strict, NodeNext);
 * 2. full: `npm install TARBALL` — the heavy packages present, importing the core still loads none
 *    of them; the README's transformers.js example (treewright/transformers) runs with
 *    transformers.js' own generate(), and `check`, `mask`, `generate` run from the installed bin.
 *
 * Installs are offline-first (`--prefer-offline`: npm's cache, the registry only for what the
 * cache lacks) and skip dependency install scripts (`--ignore-scripts`): better-sqlite3's native
 * addon is copied from this repository's own install (same Node, same machine) instead of being
 * compiled again, and onnxruntime-node needs no script (its CPU binaries ship in its package).
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { cpSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';

// npm pack (a full tsc build) and two npm installs on a shared, loaded machine: minutes, not seconds
vi.setConfig({ testTimeout: 600_000, hookTimeout: 900_000 });

const ROOT = resolve('.');
const HEAVY = ['onnxruntime-node', 'better-sqlite3', 'fastify', '@huggingface/transformers'];
const MODEL = join(ROOT, 'models', 'coop');
const TOKENIZER = join(MODEL, 'tokenizer.json');
const COOP_SQL = join(ROOT, 'grammars', 'sql', 'coop.sql');
const NPM = process.platform === 'win32' ? 'npm.cmd' : 'npm';
// onnxruntime-node's install flag as an environment variable (no .npmrc in the temporary projects)
const ENV = { ...process.env, ONNXRUNTIME_NODE_INSTALL: 'skip', npm_config_audit: 'false', npm_config_fund: 'false', npm_config_update_notifier: 'false' };

const work = mkdtempSync(join(tmpdir(), 'tw-package-'));
let tarball = '';
let packed: { size: number; unpackedSize: number; files: { path: string }[] };

function npm(cwd: string, args: string[]): string {
  const r = spawnSync(NPM, args, { cwd, env: ENV, encoding: 'utf8', maxBuffer: 64 << 20 });
  if (r.status !== 0) throw new Error(`npm ${args.join(' ')} failed (${r.status}):\n${r.stdout}\n${r.stderr}`);
  return r.stdout;
}

function project(name: string, installArgs: string[]): string {
  const dir = join(work, name);
  mkdirSync(dir);
  writeFileSync(join(dir, 'package.json'), JSON.stringify({ name: `tw-${name}`, version: '1.0.0', private: true, type: 'module' }));
  npm(dir, ['install', tarball, '--prefer-offline', '--ignore-scripts', '--no-save', ...installArgs]);
  return dir;
}

/** Runs `node -e` (ESM) in dir; returns stdout. */
function node(dir: string, code: string): string {
  return execFileSync(process.execPath, ['--input-type=module', '-e', code], { cwd: dir, encoding: 'utf8', env: ENV, maxBuffer: 16 << 20 });
}

function bin(dir: string, args: string[]): { status: number | null; stdout: string; stderr: string } {
  return spawnSync(process.execPath, [join(dir, 'node_modules', 'treewright', 'dist', 'cli', 'bin.js'), ...args], { cwd: dir, encoding: 'utf8', env: ENV });
}

// The core in plain Node: a grammar, masks over the demo tokenizer, parse and print; then the list
// of heavy packages found in the CommonJS module cache (onnxruntime-node, better-sqlite3 and fastify
// are CommonJS; transformers.js loads onnxruntime-node, so it shows there too).
const CORE = `
import { createRequire } from 'node:module';
import { compileMasks, loadGrammar, loadVocabulary, createParser, printTree, validateTree } from 'treewright';
const grammar = loadGrammar('node_modules/treewright/grammars/arith/arith.twg');
const constraint = compileMasks(grammar, loadVocabulary(${JSON.stringify(TOKENIZER)})).bind({ Func: ['max'] });
const tree = createParser(grammar).parse('max(1, 2) + 3', { names: { Func: ['max'] } });
function startAllowed() {
  const mask = new Uint32Array(Math.ceil(constraint.vocabSize / 32));
  constraint.writeAllowed(constraint.start(), 64, mask);
  return mask.some((w) => w !== 0);
}
const loaded = Object.keys(createRequire(import.meta.url).cache).map((f) => f.match(/node_modules\\/((?:@[^/]+\\/)?[^/]+)\\//)?.[1]).filter(Boolean);
console.log(JSON.stringify({
  printed: printTree(grammar, tree),
  valid: validateTree(grammar, tree, { names: { Func: ['max'] } }) === null,
  startAllowed: startAllowed(),
  heavyLoaded: [...new Set(loaded)].filter((p) => ${JSON.stringify(HEAVY)}.includes(p)),
}));
`;

beforeAll(() => {
  const out = JSON.parse(npm(ROOT, ['pack', '--json', '--pack-destination', work])) as (typeof packed & { filename: string })[];
  packed = out[0];
  tarball = join(work, out[0].filename);
});

afterAll(() => {
  rmSync(work, { recursive: true, force: true });
});

describe('npm pack', () => {
  it('ships compiled JavaScript, types, the bin and the grammars; no sources, tests or models', () => {
    const files = packed.files.map((f) => f.path);
    for (const f of ['package.json', 'README.md', 'dist/index.js', 'dist/index.d.ts', 'dist/cli/bin.js', 'dist/decode/hook.js', 'dist/server/index.js', 'dist/exec/sql-child.mjs', 'dist/server/page/index.html', 'grammars/sql/sql.twg']) {
      expect(files, f).toContain(f);
    }
    expect(files.filter((f) => /^(src|test|models|docs|\.build)\//.test(f) || f.endsWith('.ts') && !f.endsWith('.d.ts'))).toEqual([]);
    const manifest = JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8')) as { bin: Record<string, string>; exports: Record<string, unknown> };
    expect(files).toContain(manifest.bin.treewright);
    expect(readFileSync(join(ROOT, manifest.bin.treewright), 'utf8').startsWith('#!/usr/bin/env node\n')).toBe(true);
  });
});

describe('installed without the heavy packages (--omit=optional --omit=peer, fastify deleted)', () => {
  let dir = '';
  beforeAll(() => {
    dir = project('light', ['--omit=optional', '--omit=peer']);
  });

  it('npm leaves out the peers and the optional dependency; fastify is deleted by hand', () => {
    expect(HEAVY.filter((p) => existsSync(join(dir, 'node_modules', p)))).toEqual(['fastify']);
    rmSync(join(dir, 'node_modules', 'fastify'), { recursive: true });
    rmSync(join(dir, 'node_modules', '@fastify'), { recursive: true, force: true });
    expect(HEAVY.filter((p) => existsSync(join(dir, 'node_modules', p)))).toEqual([]);
  });

  it('the core works from plain Node', () => {
    const r = JSON.parse(node(dir, CORE));
    expect(r).toEqual({ printed: 'max(1, 2) + 3', valid: true, startAllowed: true, heavyLoaded: [] });
  });

  it('a feature that needs a missing package says which one', () => {
    writeFileSync(join(dir, 'x.db'), '');
    const out = node(dir, `import { namesFromDatabase } from 'treewright';
try { namesFromDatabase('x.db'); } catch (e) { console.log(e.name + ': ' + e.message); }`);
    expect(out.trim()).toBe('MissingPackageError: reading or building a SQLite database needs the package better-sqlite3, which is not installed; install it with `npm install better-sqlite3` (an optional dependency of treewright)');
  });

  it('the bin runs compiled code: --help and check', () => {
    const help = bin(dir, ['--help']);
    expect(help.status).toBe(0);
    expect(help.stdout.split('\n')[0]).toBe('Usage: treewright [options] [command]');
    const check = bin(dir, ['check', 'node_modules/treewright/grammars/lf/lf.twg']);
    expect(check.stderr).toBe('');
    expect(check.status).toBe(0);
  });

  it('a TypeScript consumer type-checks against the shipped declarations (strict, NodeNext)', () => {
    // skipLibCheck: the declarations of the model and SQLite parts name the optional packages' types
    // (absent here); the consumer's own code is still checked against the real API types — the
    // expect-error directives fail the check if those types had degraded to `any`.
    writeFileSync(join(dir, 'consumer.ts'), `import { compileMasks, loadGrammar, loadVocabulary, type Grammar, type TokenConstraint } from 'treewright';
const grammar: Grammar = loadGrammar('g.twg');
const constraint: TokenConstraint = compileMasks(grammar, loadVocabulary('t.json')).bind({});
export const n: number = constraint.vocabSize;
// @ts-expect-error vocabSize is a number
export const wrong: string = constraint.vocabSize;
// @ts-expect-error loadGrammar takes a path
loadGrammar(42);
`);
    const tsc = join(ROOT, 'node_modules', 'typescript', 'bin', 'tsc');
    const r = spawnSync(process.execPath, [tsc, '--noEmit', '--strict', '--skipLibCheck', '--module', 'nodenext', '--moduleResolution', 'nodenext', '--target', 'es2022', '--typeRoots', join(ROOT, 'node_modules', '@types'), '--types', 'node', 'consumer.ts'], { cwd: dir, encoding: 'utf8' });
    expect(r.stdout + r.stderr).toBe('');
  });
});

describe('installed with everything', () => {
  let dir = '';
  beforeAll(() => {
    dir = project('full', []);
    // the native addon, from this repository's own install (install scripts were skipped)
    const addon = join(createRequire(import.meta.url).resolve('better-sqlite3/package.json'), '..', 'build');
    cpSync(addon, join(dir, 'node_modules', 'better-sqlite3', 'build'), { recursive: true });
  });

  it('the heavy packages are installed, and importing the core loads none of them', () => {
    expect(HEAVY.filter((p) => !existsSync(join(dir, 'node_modules', p)))).toEqual([]);
    expect(JSON.parse(node(dir, CORE)).heavyLoaded).toEqual([]);
  });

  it("the README's transformers.js example runs with transformers.js' own generate()", () => {
    // Outside reference: transformers.js v4 loads the demo model and decodes with its own generate();
    // the hook only masks. The constrained output must parse as a program of the grammar.
    const out = node(dir, `
import { AutoModelForSeq2SeqLM, AutoTokenizer, env } from '@huggingface/transformers';
import { readFileSync } from 'node:fs';
import { compileMasks, loadGrammar, loadVocabulary, createParser, namesFromDatabase, buildSqliteFile } from 'treewright';
import { TreewrightMaskHook } from 'treewright/transformers';
env.allowRemoteModels = false;
const model = await AutoModelForSeq2SeqLM.from_pretrained(${JSON.stringify(MODEL)}, { local_files_only: true, dtype: 'fp32', session_options: { intraOpNumThreads: 1 } });
const tokenizer = await AutoTokenizer.from_pretrained(${JSON.stringify(MODEL)}, { local_files_only: true });
const grammar = loadGrammar('node_modules/treewright/grammars/sql/sql.twg');
buildSqliteFile(readFileSync(${JSON.stringify(COOP_SQL)}, 'utf8'), 'coop.db');
const names = namesFromDatabase('coop.db');
const constraint = compileMasks(grammar, loadVocabulary(${JSON.stringify(TOKENIZER)})).bind(names);

const guard = new TreewrightMaskHook(constraint, { maxNewTokens: 64 });
const inputs = tokenizer('to sql: which orchards grow elstar?');
const out = await model.generate({ ...inputs, max_new_tokens: 64, logits_processor: [guard] });
const text = tokenizer.decode(out[0], { skip_special_tokens: true }).trim();
createParser(grammar).parse(text, { names });
console.log(JSON.stringify({ text }));
`);
    expect(JSON.parse(out.trim().split('\n').pop()!).text).toMatch(/^SELECT /);
  });

  it('check, mask and generate run from the installed bin', () => {
    const check = bin(dir, ['check', 'sql']);
    expect(check.status, check.stderr).toBe(0);
    const mask = bin(dir, ['mask', '--grammar', 'sql', '--db', COOP_SQL, '--tokenizer', TOKENIZER, '--prefix', 'SELECT name FROM orchards WHERE hect', '--json']);
    expect(mask.status, mask.stderr).toBe(0);
    expect(JSON.parse(mask.stdout)).toMatchObject({ viable: true, complete: false });
    const gen = bin(dir, ['generate', '--model', MODEL, '--grammar', 'sql', '--db', COOP_SQL, '--json', 'Which orchards cover more than 5 hectares?']);
    expect(gen.status, gen.stderr).toBe(0);
    expect(JSON.parse(gen.stdout)).toMatchObject({ valid: true, well_typed: true });
  });
});
