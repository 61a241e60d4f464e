/**
 * One run at a time per output folder: a lock file `.phasebook-lock`, created
 * with O_EXCL (`wx`), holding the process id, the host and the time it was
 * taken. A second run into the same folder stops with a message naming the run
 * that holds it. A lock left by a process that no longer runs on this host (killed,
 * crashed) is stale: it is taken over, and the caller is told. The lock is removed
 * when the commit ends and, synchronously, when the process exits.
 */
import { readFileSync, rmSync } from 'node:fs';
import { randomBytes } from 'node:crypto';
import { link, open, unlink, writeFile } from 'node:fs/promises';
import { hostname } from 'node:os';
import { join } from 'node:path';
import { StopError, fsReason } from '../errors.js';

export const LOCK_NAME = '.phasebook-lock';

interface LockOwner {
  pid: number;
  host: string;
  since: string;
}

/** Lock files this process holds now; removed on exit (releaseAllLocksSync). */
const held = new Set<string>();

export interface FolderLock {
  path: string;
  /** Set when a stale lock of a dead process was taken over: words for the user. */
  tookOver?: string;
  release(): Promise<void>;
}

/** Take the lock of `folder`, or stop with a message naming the run that holds it. */
export async function lockFolder(folder: string): Promise<FolderLock> {
  const path = join(folder, LOCK_NAME);
  let tookOver: string | undefined;
  for (let attempt = 0; attempt < 2; attempt++) {
    try {
      await createWithOwner(path, { pid: process.pid, host: hostname(), since: new Date().toISOString() });
      held.add(path);
      return { path, tookOver, release: () => release(path) };
    } catch (err) {
      const code = (err as { code?: string }).code;
      // No folder: nothing to lock, and the commit says which output cannot be written there.
      if (code === 'ENOENT' || code === 'ENOTDIR') return { path, release: async () => undefined };
      if (code !== 'EEXIST') throw new StopError('output', `cannot take the output folder's lock: ${fsReason(err)}`, { file: path });
    }
    const owner = readOwner(path);
    if (owner && owner.host === hostname() && !alive(owner.pid)) {
      // Stale: its process is gone. Remove it and try once more (another run may win that race; then it holds it).
      await unlink(path).catch(() => undefined);
      tookOver = `removed a stale lock left by process ${owner.pid} (started ${owner.since}), which no longer runs`;
      continue;
    }
    const who = owner ? `process ${owner.pid} on ${owner.host}, since ${owner.since}` : 'a lock file whose owner cannot be read';
    throw new StopError(
      'output',
      `another phasebook run is writing to this folder (${who}); wait for it to finish or choose another output folder with --out` +
        (owner ? '' : `; if no phasebook run is writing there, delete ${path}`),
      { file: folder },
    );
  }
  throw new StopError('output', 'another phasebook run took the output folder\'s lock at the same moment; run again', { file: folder });
}

/**
 * Create the lock file with its owner already in it: the text goes into a file of this
 * process's own, which is then hard-linked to the lock's name (a link fails with EEXIST
 * when the name exists, like O_EXCL). A run that finds the lock therefore always reads
 * a whole owner, never the empty file an O_EXCL create shows before it is written. On a
 * file system without hard links, an O_EXCL create is the fallback.
 */
async function createWithOwner(path: string, owner: LockOwner): Promise<void> {
  const text = JSON.stringify(owner) + '\n';
  const mine = `${path}.${process.pid}.${randomBytes(4).toString('hex')}`;
  try {
    await writeFile(mine, text, { flag: 'wx' }); // a full disk can fail it after creating the file: removed below
    await link(mine, path);
  } catch (err) {
    const code = (err as { code?: string }).code;
    if (code !== 'EPERM' && code !== 'ENOTSUP' && code !== 'EOPNOTSUPP') throw err;
    const fh = await open(path, 'wx');
    try {
      await fh.writeFile(text);
    } finally {
      await fh.close();
    }
  } finally {
    await unlink(mine).catch(() => undefined);
  }
}

function readOwner(path: string): LockOwner | undefined {
  try {
    const owner = JSON.parse(readFileSync(path, 'utf8')) as Partial<LockOwner>;
    if (typeof owner.pid === 'number' && Number.isInteger(owner.pid) && typeof owner.host === 'string' && typeof owner.since === 'string') {
      return owner as LockOwner;
    }
  } catch {
    // unreadable or half written: treated as held
  }
  return undefined;
}

/** Whether a process with this id runs on this host (signal 0 only checks). */
function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    return (err as { code?: string }).code === 'EPERM'; // it exists, owned by someone else
  }
}

async function release(path: string): Promise<void> {
  if (!held.delete(path)) return;
  await unlink(path).catch(() => undefined);
}

/** Remove every lock this process holds (synchronous: for exit and signal handlers). */
export function releaseAllLocksSync(): void {
  for (const path of held) {
    try {
      rmSync(path, { force: true });
    } catch {
      // Best effort: the process is stopping.
    }
  }
  held.clear();
}
