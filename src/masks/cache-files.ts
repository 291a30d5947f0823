/**
 * The mask cache's files on disk, treated as untrusted: a private per-user folder, files created
 * exclusively and never through a symbolic link, replaced atomically, read only when they are
 * regular files of ours within a size bound, and sealed with a keyed hash so a file this user did
 * not write (planted, copied from elsewhere, edited with a recomputed checksum) is never believed.
 *
 * - Folder: `$XDG_CACHE_HOME/treewright/masks` (XDG Base Directory Specification 0.8: an absolute
 *   `XDG_CACHE_HOME`, else `$HOME/.cache`), else `<os.tmpdir()>/treewright-<uid>/masks`. Every
 *   folder from the per-user root down is created mode 0700 and then checked with lstat: a real
 *   directory (not a symbolic link), owned by this user, no permission bits for group or others (a
 *   folder of ours with looser bits is tightened; anyone else's is refused). CWE-379 (temporary file
 *   in an insecure directory), CWE-59 (link following).
 * - Writing: a temporary name with 128 random bits, opened O_CREAT|O_EXCL|O_NOFOLLOW mode 0600
 *   (POSIX open(2): O_EXCL fails if the name exists, even as a dangling symbolic link; O_NOFOLLOW
 *   fails on a link), written, fsync'ed, then rename(2)d over the final name (atomic on POSIX: a
 *   reader sees the old file or the new one). CWE-377 (insecure temporary file).
 * - Reading: opened O_RDONLY|O_NOFOLLOW|O_NONBLOCK (a FIFO does not block the open), then fstat on
 *   the open descriptor (no race between check and use, CWE-367): a regular file, owned by this
 *   user, at most MAX_CACHE_FILE_BYTES; exactly that many bytes are read.
 * - Seal: HMAC-SHA256 (RFC 2104) of the whole file under a 32-byte secret kept in the folder
 *   (`secret.key`, created like a cache file, mode 0600, checked like one). The seal is the last 32
 *   bytes of a file; `openSealed` compares it in constant time and returns the rest.
 *
 * Problems are CacheFileError: the caller rebuilds (a bad file) or runs without the cache (a bad
 * folder), with the message as a warning. On systems without user ids (Windows) the owner checks
 * are skipped and the folder relies on the user profile's permissions.
 */
import { createHmac, randomBytes, timingSafeEqual } from 'node:crypto';
import { closeSync, constants, fstatSync, fsyncSync, lstatSync, mkdirSync, chmodSync, openSync, readSync, renameSync, unlinkSync, writeSync, type Stats } from 'node:fs';
import { homedir, tmpdir } from 'node:os';
import { basename, dirname, isAbsolute, join } from 'node:path';

/** Largest cache file read (the demo model's largest is a few MB; a 250k-token vocabulary with many classes stays well under this). */
export const MAX_CACHE_FILE_BYTES = 512 * 1024 * 1024;
const SEAL_BYTES = 32;
const SECRET_FILE = 'secret.key';

export class CacheFileError extends Error {
  constructor(readonly file: string, message: string) {
    super(`${file}: ${message}`);
    this.name = 'CacheFileError';
  }
}

const uid = (): number | null => (typeof process.getuid === 'function' ? process.getuid() : null);

/** The per-user cache folder (see the header); created lazily by `privateDir`. */
export function defaultCacheDir(env: NodeJS.ProcessEnv = process.env): string {
  const xdg = env.XDG_CACHE_HOME;
  if (xdg !== undefined && xdg !== '' && isAbsolute(xdg)) return join(xdg, 'treewright', 'masks');
  let home = '';
  try {
    home = env.HOME ?? homedir();
  } catch {
    home = '';
  }
  if (home !== '' && isAbsolute(home)) return join(home, '.cache', 'treewright', 'masks');
  const id = uid();
  return join(tmpdir(), `treewright-${id ?? 'user'}`, 'masks');
}

function describeMode(st: Stats): string {
  return (st.mode & 0o777).toString(8).padStart(4, '0');
}

/** Checks one folder: a directory (not a link), ours, no group/other bits (ours with looser bits is tightened). */
function checkDir(dir: string): void {
  let st: Stats;
  try {
    st = lstatSync(dir);
  } catch (e) {
    throw new CacheFileError(dir, `cannot inspect the cache folder (${(e as Error).message})`);
  }
  if (st.isSymbolicLink()) throw new CacheFileError(dir, 'is a symbolic link; expected a real folder (a link could send the cache anywhere)');
  if (!st.isDirectory()) throw new CacheFileError(dir, 'is not a folder; expected the mask cache folder');
  const me = uid();
  if (me !== null && st.uid !== me) throw new CacheFileError(dir, `belongs to user ${st.uid}; expected a folder of this user (${me}) — another user may have created it`);
  if (me !== null && (st.mode & 0o077) !== 0) {
    try {
      chmodSync(dir, 0o700);
    } catch (e) {
      throw new CacheFileError(dir, `has mode ${describeMode(st)} and cannot be made private (${(e as Error).message}); expected 0700`);
    }
  }
}

/**
 * Creates `dir` (mode 0700) and checks it — and its parent when that is the per-user root of the
 * default layout (`treewright` or `treewright-<uid>`). Throws CacheFileError when either is not
 * private to this user.
 */
export function privateDir(dir: string): void {
  try {
    mkdirSync(dir, { recursive: true, mode: 0o700 });
  } catch (e) {
    throw new CacheFileError(dir, `cannot create the cache folder (${(e as Error).message})`);
  }
  // the per-user root of the default layout is checked too: whoever controls a parent folder can
  // swap the cache folder between our check and our use
  const parent = dirname(dir);
  if (/^treewright(-|$)/.test(basename(parent))) checkDir(parent);
  checkDir(dir);
}

/** Reads a regular file of ours of at most `max` bytes, never following a link or blocking on a FIFO. */
export function readPrivateFile(file: string, max: number = MAX_CACHE_FILE_BYTES): Buffer {
  let fd: number;
  try {
    fd = openSync(file, constants.O_RDONLY | (constants.O_NOFOLLOW ?? 0) | (constants.O_NONBLOCK ?? 0));
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'ELOOP' || code === 'EMLINK') throw new CacheFileError(file, 'is a symbolic link; expected a regular file written by treewright');
    throw new CacheFileError(file, `cannot open (${(e as Error).message})`);
  }
  try {
    const st = fstatSync(fd);
    if (!st.isFile()) throw new CacheFileError(file, `is not a regular file (${st.isDirectory() ? 'a folder' : st.isFIFO() ? 'a FIFO' : 'a special file'}); expected a file written by treewright`);
    const me = uid();
    if (me !== null && st.uid !== me) throw new CacheFileError(file, `belongs to user ${st.uid}; expected a file of this user (${me})`);
    if (st.size > max) throw new CacheFileError(file, `is ${st.size} bytes; expected at most ${max}`);
    const out = Buffer.allocUnsafe(st.size);
    let got = 0;
    while (got < st.size) {
      const n = readSync(fd, out, got, st.size - got, got);
      if (n === 0) break;
      got += n;
    }
    if (got !== st.size) throw new CacheFileError(file, `changed while being read (${got} of ${st.size} bytes)`);
    return out;
  } finally {
    closeSync(fd);
  }
}

/**
 * Writes `parts` to `file` atomically: an exclusive, no-follow temporary file with a random name
 * in the same folder, fsync, rename over `file`. The temporary file is removed on failure.
 */
export function writePrivateFile(file: string, parts: readonly Uint8Array[], mode = 0o600): void {
  const tmp = `${file}.${randomBytes(16).toString('hex')}.tmp`;
  let fd: number;
  try {
    fd = openSync(tmp, constants.O_WRONLY | constants.O_CREAT | constants.O_EXCL | (constants.O_NOFOLLOW ?? 0), mode);
  } catch (e) {
    throw new CacheFileError(tmp, `cannot create the temporary file (${(e as Error).message})`);
  }
  let ok = false;
  try {
    for (const p of parts) {
      let off = 0;
      while (off < p.length) off += writeSync(fd, p, off, p.length - off);
    }
    fsyncSync(fd);
    ok = true;
  } finally {
    closeSync(fd);
    if (!ok) {
      try {
        unlinkSync(tmp);
      } catch {
        // already gone
      }
    }
  }
  try {
    renameSync(tmp, file);
  } catch (e) {
    try {
      unlinkSync(tmp);
    } catch {
      // already gone
    }
    throw new CacheFileError(file, `cannot replace the cache file (${(e as Error).message})`);
  }
}

/** The folder's 32-byte sealing secret, created on first use (exclusively: two processes agree on one). */
export function folderSecret(dir: string): Buffer {
  const file = join(dir, SECRET_FILE);
  for (let attempt = 0; attempt < 2; attempt++) {
    try {
      const s = readPrivateFile(file, 64);
      if (s.length !== 32) throw new CacheFileError(file, `is ${s.length} bytes; expected a 32-byte secret`);
      return s;
    } catch (e) {
      const missing = e instanceof CacheFileError && /ENOENT/.test(e.message);
      if (!missing) throw e;
    }
    // create it under its final name with O_EXCL: if another process won the race, read theirs
    const secret = randomBytes(32);
    let fd: number;
    try {
      fd = openSync(file, constants.O_WRONLY | constants.O_CREAT | constants.O_EXCL | (constants.O_NOFOLLOW ?? 0), 0o600);
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code === 'EEXIST') continue;
      throw new CacheFileError(file, `cannot create the cache secret (${(e as Error).message})`);
    }
    try {
      writeSync(fd, secret);
      fsyncSync(fd);
    } finally {
      closeSync(fd);
    }
    return secret;
  }
  throw new CacheFileError(file, 'cannot read or create the cache secret');
}

/** HMAC-SHA256 of `data` under `secret`. */
function seal(secret: Buffer, data: Uint8Array): Buffer {
  return createHmac('sha256', secret).update(data).digest();
}

/** Writes `data` followed by its seal. */
export function writeSealed(file: string, secret: Buffer, data: Uint8Array): void {
  writePrivateFile(file, [data, seal(secret, data)]);
}

/** Reads a sealed file; throws CacheFileError when it is missing its seal or the seal does not match. */
export function readSealed(file: string, secret: Buffer): Buffer {
  const all = readPrivateFile(file);
  if (all.length < SEAL_BYTES) throw new CacheFileError(file, 'too short to hold a seal; expected a file written by treewright');
  const data = all.subarray(0, all.length - SEAL_BYTES);
  const want = seal(secret, data);
  if (!timingSafeEqual(want, all.subarray(all.length - SEAL_BYTES))) {
    throw new CacheFileError(file, 'its seal does not match this cache folder\'s secret; expected a file this user\'s treewright wrote here (it may have been edited, copied from elsewhere or planted)');
  }
  return data;
}
