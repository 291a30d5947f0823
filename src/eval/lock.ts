/**
 * One evaluation run per output folder: `lockOutDir` takes an exclusive lock on `--out` for the
 * length of a run, so two runs never interleave their rows in one results.jsonl (which would leave
 * duplicate rows that every later run then refuses).
 *
 * The lock is a file `<out>/.treewright-lock` created with O_CREAT|O_EXCL|O_NOFOLLOW (POSIX open(2):
 * exactly one creator succeeds, on local file systems and NFSv3+), holding the owner's pid, host
 * and start time. A second run gets a clear error naming the owner. A lock left by a run that was
 * killed (kill -9, power loss) is taken over when its pid no longer exists on this host; a lock
 * from another host is never taken over (its process cannot be checked from here) — the message
 * says which file to remove. Take-over renames the stale file away first (rename(2) is atomic) and
 * checks that what it renamed is the stale lock it judged, so two runs starting together after a
 * crash do not both proceed.
 */
import { closeSync, constants, openSync, readFileSync, renameSync, unlinkSync, writeSync } from 'node:fs';
import { randomBytes } from 'node:crypto';
import { hostname } from 'node:os';
import { join } from 'node:path';

export const LOCK_FILE = '.treewright-lock';

interface Owner {
  readonly pid: number;
  readonly host: string;
  readonly started: string;
  readonly token: string;
}

export class OutDirLocked extends Error {
  constructor(readonly dir: string, message: string) {
    super(message);
    this.name = 'OutDirLocked';
  }
}

function readOwner(file: string): Owner | null {
  try {
    const fd = openSync(file, constants.O_RDONLY | (constants.O_NOFOLLOW ?? 0) | (constants.O_NONBLOCK ?? 0));
    try {
      const o = JSON.parse(readFileSync(fd, 'utf8').slice(0, 4096)) as Owner;
      return typeof o.pid === 'number' && typeof o.host === 'string' ? o : null;
    } finally {
      closeSync(fd);
    }
  } catch {
    return null;
  }
}

function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === 'EPERM';
  }
}

/**
 * Locks `dir` (which must exist) for this process; returns the function that releases the lock.
 * Throws OutDirLocked when another live run holds it.
 */
export function lockOutDir(dir: string): () => void {
  const file = join(dir, LOCK_FILE);
  const me: Owner = { pid: process.pid, host: hostname(), started: new Date().toISOString(), token: randomBytes(8).toString('hex') };
  for (let attempt = 0; attempt < 3; attempt++) {
    let fd: number;
    try {
      fd = openSync(file, constants.O_WRONLY | constants.O_CREAT | constants.O_EXCL | (constants.O_NOFOLLOW ?? 0), 0o644);
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code !== 'EEXIST') throw new OutDirLocked(dir, `${file}: cannot create the run lock (${(e as Error).message})`);
      const owner = readOwner(file);
      if (owner !== null && owner.host === me.host && !alive(owner.pid)) {
        // stale: move it aside, and put it back if what moved was not the lock judged stale
        const aside = `${file}.stale-${me.token}`;
        try {
          renameSync(file, aside);
        } catch {
          continue;
        }
        const moved = readOwner(aside);
        if (moved !== null && moved.token === owner.token && moved.pid === owner.pid) {
          unlinkSync(aside);
        } else {
          try {
            renameSync(aside, file);
          } catch {
            // someone else holds the lock name again; the next attempt reports them
          }
        }
        continue;
      }
      const who = owner === null ? 'another run' : `another evaluate run (pid ${owner.pid} on ${owner.host}, started ${owner.started})`;
      throw new OutDirLocked(dir, `${dir}: ${who} is writing here; expected one run per --out folder (wait for it to finish, use another --out, or remove ${file} if that run is gone)`);
    }
    try {
      writeSync(fd, JSON.stringify(me) + '\n');
    } finally {
      closeSync(fd);
    }
    let released = false;
    return () => {
      if (released) return;
      released = true;
      const now = readOwner(file);
      if (now !== null && now.token === me.token) {
        try {
          unlinkSync(file);
        } catch {
          // already gone
        }
      }
    };
  }
  throw new OutDirLocked(dir, `${dir}: could not take the run lock ${file} after three attempts; expected one run per --out folder`);
}
