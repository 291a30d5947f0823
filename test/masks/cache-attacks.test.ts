/**
 * The mask cache against another local user: real folders, symbolic links, FIFOs and forged files
 * (this process plays the attacker by writing into the folder, or by handing a file to another uid
 * with chown when it runs as root). The defences and the standards they follow:
 * - private folder: mode 0700, owner and mode checked with lstat (CWE-379, CWE-59);
 * - temporary files: random names opened O_CREAT|O_EXCL|O_NOFOLLOW, then rename(2) (POSIX open(2)
 *   and rename(2) semantics; CWE-377);
 * - reading: O_NOFOLLOW|O_NONBLOCK, then fstat on the descriptor — regular file, ours, bounded size
 *   (CWE-367 time-of-check/time-of-use is avoided by checking the open descriptor);
 * - content: an HMAC-SHA256 seal (RFC 2104) under a per-folder secret, then every table bounds-checked.
 */
import { afterAll, describe, expect, it, vi } from 'vitest';
import { execFileSync } from 'node:child_process';
import { createHmac } from 'node:crypto';
import { chmodSync, chownSync, existsSync, lstatSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { cacheKey, CacheError, defaultCacheDir, deserializeEngine, loadOrCompile, serializeEngine } from '../../src/masks/index.ts';
import { folderSecret, readPrivateFile } from '../../src/masks/cache-files.ts';
import { grammar } from './helpers.ts';

vi.setConfig({ testTimeout: 60_000 });

const TOKENIZER = 'test/fixtures/tiny-seq2seq/tokenizer.json';
const arith = grammar('arith');
const arithText = readFileSync(arith.file, 'utf8');
const root = mkdtempSync(join(tmpdir(), 'tw-cache-attacks-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));
const isRoot = typeof process.getuid === 'function' && process.getuid() === 0;
let n = 0;
const freshDir = () => join(root, `c${n++}`, 'treewright', 'masks');
const mode = (p: string) => statSync(p).mode & 0o777;

describe('the folder', () => {
  it('is created 0700 (and its per-user root too), with a 0600 secret', () => {
    const dir = freshDir();
    const r = loadOrCompile(arith, arithText, TOKENIZER, dir);
    expect(r.warning).toBeNull();
    expect(mode(dir)).toBe(0o700);
    expect(mode(join(dir, '..'))).toBe(0o700);
    expect(mode(join(dir, 'secret.key'))).toBe(0o600);
    expect(mode(r.file!)).toBe(0o600);
    expect(loadOrCompile(arith, arithText, TOKENIZER, dir).fromCache).toBe(true);
  });

  it('a folder of ours left 0755 by an older version is tightened to 0700', () => {
    const dir = freshDir();
    mkdirSync(dir, { recursive: true, mode: 0o755 });
    chmodSync(dir, 0o755);
    loadOrCompile(arith, arithText, TOKENIZER, dir);
    expect(mode(dir)).toBe(0o700);
  });

  it('a folder that is a symbolic link is refused: the engine is built, nothing is written there', () => {
    const target = join(root, `elsewhere${n++}`);
    mkdirSync(target, { mode: 0o700 });
    const dir = freshDir();
    mkdirSync(join(dir, '..'), { recursive: true, mode: 0o700 });
    symlinkSync(target, dir);
    const r = loadOrCompile(arith, arithText, TOKENIZER, dir);
    expect(r.fromCache).toBe(false);
    expect(r.file).toBeNull();
    expect(r.warning).toBe(`${dir}: is a symbolic link; expected a real folder (a link could send the cache anywhere); running without the mask cache`);
    expect(readdirSync(target)).toEqual([]);
    expect(r.engine.grammar).toBe(arith);
  });

  it.runIf(isRoot)('a folder (or per-user root) that belongs to another user is refused', () => {
    for (const which of ['masks', 'root'] as const) {
      const dir = freshDir();
      mkdirSync(dir, { recursive: true, mode: 0o700 });
      chownSync(which === 'masks' ? dir : join(dir, '..'), 65534, 65534);
      const r = loadOrCompile(arith, arithText, TOKENIZER, dir);
      expect(r.file).toBeNull();
      expect(r.warning).toMatch(/belongs to user 65534; expected a folder of this user \(0\) — another user may have created it; running without the mask cache$/);
      expect(existsSync(join(dir, 'secret.key'))).toBe(false);
    }
  });

  it('the default is per user: XDG_CACHE_HOME when absolute, else ~/.cache', () => {
    expect(defaultCacheDir({ XDG_CACHE_HOME: '/srv/u/cache', HOME: '/home/u' })).toBe('/srv/u/cache/treewright/masks');
    expect(defaultCacheDir({ XDG_CACHE_HOME: 'relative', HOME: '/home/u' })).toBe('/home/u/.cache/treewright/masks');
    expect(defaultCacheDir({ HOME: '/home/u' })).toBe('/home/u/.cache/treewright/masks');
  });
});

describe('files in the folder', () => {
  it('symbolic links at the final name and at the old predictable temporary name never redirect a write', () => {
    const dir = freshDir();
    mkdirSync(dir, { recursive: true, mode: 0o700 });
    const victim = join(root, `victim${n++}.txt`);
    writeFileSync(victim, 'precious');
    const key = cacheKey(arithText, TOKENIZER);
    const file = join(dir, `${key}.twmask`);
    symlinkSync(victim, file);
    symlinkSync(victim, `${file}.${process.pid}.tmp`);
    const r = loadOrCompile(arith, arithText, TOKENIZER, dir);
    expect(r.warning).toBe(`${file}: is a symbolic link; expected a regular file written by treewright; rebuilt it`);
    expect(readFileSync(victim, 'utf8')).toBe('precious');
    // the rename replaced the link itself with a regular file
    expect(lstatSync(file).isFile()).toBe(true);
    expect(loadOrCompile(arith, arithText, TOKENIZER, dir).fromCache).toBe(true);
    // no temporary file is left behind
    expect(readdirSync(dir).filter((f) => f.endsWith('.tmp') && !f.includes(`.${process.pid}.`))).toEqual([]);
  });

  it('a FIFO at the cache name does not hang the load', () => {
    const dir = freshDir();
    mkdirSync(dir, { recursive: true, mode: 0o700 });
    const file = join(dir, `${cacheKey(arithText, TOKENIZER)}.twmask`);
    execFileSync('mkfifo', [file]);
    const r = loadOrCompile(arith, arithText, TOKENIZER, dir);
    expect(r.warning).toBe(`${file}: is not a regular file (a FIFO); expected a file written by treewright; rebuilt it`);
    expect(lstatSync(file).isFile()).toBe(true);
  });

  it('a folder at the cache name is reported, not a crash', () => {
    const dir = freshDir();
    const file = join(dir, `${cacheKey(arithText, TOKENIZER)}.twmask`);
    mkdirSync(join(file, 'inside'), { recursive: true, mode: 0o700 });
    const r = loadOrCompile(arith, arithText, TOKENIZER, dir);
    expect(r.fromCache).toBe(false);
    expect(r.warning).toMatch(new RegExp(`^${file.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}: is not a regular file \\(a folder\\); .*; rebuilt it; .*cannot replace the cache file .*; the tables were not cached$`));
  });

  it.runIf(isRoot)('a cache file owned by another user is not read', () => {
    const dir = freshDir();
    const first = loadOrCompile(arith, arithText, TOKENIZER, dir);
    chownSync(first.file!, 65534, 65534);
    const r = loadOrCompile(arith, arithText, TOKENIZER, dir);
    expect(r.fromCache).toBe(false);
    expect(r.warning).toBe(`${first.file}: belongs to user 65534; expected a file of this user (0); rebuilt it`);
  });

  it('an oversized file is refused before it is read', () => {
    const dir = freshDir();
    mkdirSync(dir, { recursive: true, mode: 0o700 });
    const f = join(dir, 'big');
    writeFileSync(f, Buffer.alloc(2048));
    expect(() => readPrivateFile(f, 1024)).toThrow(`${f}: is 2048 bytes; expected at most 1024`);
  });
});

describe('forged content', () => {
  /** A valid engine serialised, with one table bit set past the vocabulary size and the internal checksum recomputed. */
  function forged(): { data: Buffer; key: string; vocabSize: number } {
    const dir = freshDir();
    const { engine } = loadOrCompile(arith, arithText, TOKENIZER, dir);
    const key = cacheKey(arithText, TOKENIZER);
    const vocabSize = engine.vocab.vocabSize;
    expect(vocabSize % 32).not.toBe(0); // else no bit past the vocabulary fits in a word
    const t = engine.classes.find((c) => c !== null)!;
    const saved = t.inside[1]![t.inside[1]!.length - 1]!;
    t.inside[1]![t.inside[1]!.length - 1] = saved | (1 << 31); // allows id ⌈V/32⌉·32 − 1 ≥ V
    try {
      return { data: serializeEngine(engine, key), key, vocabSize };
    } finally {
      t.inside[1]![t.inside[1]!.length - 1] = saved;
    }
  }

  it('a file with a recomputed checksum but no valid seal is not believed', () => {
    const dir = freshDir();
    const first = loadOrCompile(arith, arithText, TOKENIZER, dir);
    const { data } = forged();
    // the attacker appends a seal of their own (they cannot read the folder's secret)
    writeFileSync(first.file!, Buffer.concat([data, Buffer.alloc(32, 7)]));
    const r = loadOrCompile(arith, arithText, TOKENIZER, dir);
    expect(r.fromCache).toBe(false);
    expect(r.warning).toMatch(/its seal does not match this cache folder's secret/);
  });

  it('even correctly sealed, a table allowing ids past the vocabulary is refused', () => {
    const { data, key, vocabSize } = forged();
    expect(() => deserializeEngine(data, arith, key, 'forged.twmask')).toThrow(CacheError);
    expect(() => deserializeEngine(data, arith, key, 'forged.twmask')).toThrow(`allows token ids at or past the vocabulary size ${vocabSize}`);
    // and the same file sealed with the folder's own secret is refused by loadOrCompile too
    const dir = freshDir();
    const first = loadOrCompile(arith, arithText, TOKENIZER, dir);
    writeFileSync(first.file!, Buffer.concat([data, createHmac('sha256', folderSecret(dir)).update(data).digest()]));
    const r = loadOrCompile(arith, arithText, TOKENIZER, dir);
    expect(r.fromCache).toBe(false);
    expect(r.warning).toMatch(/allows token ids at or past the vocabulary size/);
  });
});
