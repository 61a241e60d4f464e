/**
 * Atomic output: every file is written to a temporary file in its own folder,
 * flushed to disk (fsync) and renamed into place, so a reader never sees half a
 * file and an interrupted run leaves no new output (DESIGN.md §7).
 *
 * Temporary names: `.phasebook-tmp-<random>/<basename>`, in a folder made for
 * the commit next to the targets (one per target folder). A folder, not files:
 * removing it on Ctrl-C also stops a writer whose file was still being created
 * at that moment (its create then fails) from leaving that file behind.
 * When replacing (force) inside `commitAll`, the old file is first kept as a
 * hard link (or copy) `.phasebook-old-<random>-<basename>` so that a failed
 * rename later in the set can put it back; the backups are removed at the end.
 */
import { randomBytes } from 'node:crypto';
import { mkdtempSync, rmSync } from 'node:fs';
import { copyFile, link, lstat, open, readdir, realpath, rename, rm, stat, unlink } from 'node:fs/promises';
import { basename, dirname, join, resolve } from 'node:path';
import { Interrupted, StopError, fsReason } from '../errors.js';
import { pushTo } from '../group.js';
import { LOCK_NAME, lockFolder, releaseAllLocksSync, type FolderLock } from './folder-lock.js';

export interface AtomicWriteOptions {
  /** Replace targets that already exist. Default false: an existing target stops the run. */
  force?: boolean;
  /**
   * Files the run reads (worklist, method, history). A target that is one of them
   * (the same real path, or the same file by device and inode: a link, another
   * spelling of the path) stops the run before anything is written, with or
   * without `force`: an input is never replaced.
   */
  inputs?: readonly InputFile[];
  /**
   * Files of a folder that belong to this output set (e.g. every `<stem>.*.report.html`).
   * Those the commit does not write are earlier outputs: without `force` they stop the
   * run like an existing target; with it they are removed in the same commit (and put
   * back if the commit fails), so no stale output stays beside the new ones.
   */
  outputSet?: { folder: string; belongs: (name: string) => boolean };
  /** Told what the commit did besides writing (a stale lock taken over, leftovers found). */
  onNotice?: (text: string) => void;
}

/** A file the run reads, with what it is in words ("the worklist"). */
export interface InputFile {
  path: string;
  role: string;
}

export interface WriteJob {
  /** Final path of the output. */
  target: string;
  /** Writes the whole output to `tmpPath` (a new file in the target's folder). */
  write: (tmpPath: string) => Promise<void>;
  /**
   * Jobs of one lane are written one after another, in their order; jobs of
   * different lanes at the same time (default: one lane for all). The reports
   * have a lane of their own: one is made while the workbook's stream waits on
   * the disk.
   */
  lane?: string;
}

/**
 * Stop when a target is one of the run's inputs. Compared by real path (symbolic
 * links and `..` resolved) and by file identity (device and inode: a hard link or
 * a bind mount), so no spelling of the path gets past it. An input that does not
 * exist yet (a new history file) cannot be replaced and is skipped.
 */
async function refuseInputsAsTargets(targets: readonly string[], inputs: readonly InputFile[]): Promise<void> {
  const known: { input: InputFile; real: string; dev: number; ino: number }[] = [];
  for (const input of inputs) {
    if (input.path === '') continue;
    try {
      const st = await stat(input.path);
      known.push({ input, real: await realpath(input.path), dev: st.dev, ino: st.ino });
    } catch {
      // Not there: nothing to protect.
    }
  }
  if (known.length === 0) return;
  for (const target of targets) {
    let st;
    let real;
    try {
      st = await stat(target);
      real = await realpath(target);
    } catch {
      continue; // no file there (or a dangling link): writing it replaces no input
    }
    const hit = known.find((k) => k.real === real || (k.dev === st.dev && k.ino === st.ino));
    if (hit) {
      const alias = hit.input.path === target ? '' : ' (the same file by another name or link)';
      throw new StopError(
        'output',
        `would replace ${hit.input.role} "${hit.input.path}"${alias}; an input is never replaced, even with --force: choose another output folder with --out`,
        { file: target },
      );
    }
  }
}

/** Temp folders and backup files alive right now; removed on SIGINT/SIGTERM or exit. */
const live = new Set<string>();

/** Write one output atomically: temp file, fsync, rename. */
export async function writeFileAtomic(
  target: string,
  write: (tmpPath: string) => Promise<void>,
  options: AtomicWriteOptions = {},
): Promise<void> {
  await commitAll([{ target, write }], options);
}

/**
 * Write several outputs so that a failure in any leaves none of the new files:
 * all targets are checked first, then all temps are written, then all are renamed.
 * A rename failing part-way puts back what was already renamed.
 */
export async function commitAll(jobs: readonly WriteJob[], options: AtomicWriteOptions = {}): Promise<void> {
  const folders = [...new Set(jobs.map((j) => dirname(j.target)))].sort();
  const locks: FolderLock[] = [];
  try {
    // One run at a time per output folder, from the first check to the last rename.
    for (const folder of folders) {
      const lock = await lockFolder(folder);
      locks.push(lock);
      if (lock.tookOver) options.onNotice?.(`${folder}: ${lock.tookOver}`);
      await clearLeftovers(folder, options.onNotice);
    }
    await commitLocked(jobs, options);
  } finally {
    for (const lock of locks) await lock.release();
  }
}

/**
 * Leftovers of a run that was killed (no handler ran): its temp folders hold only
 * unfinished new outputs and are removed; a backup `.phasebook-old-*` is the earlier
 * version of an output it was replacing, so it is kept and reported. Called with the
 * folder's lock held, so nothing found here belongs to a live run.
 */
async function clearLeftovers(folder: string, onNotice: AtomicWriteOptions['onNotice']): Promise<void> {
  let names: string[];
  try {
    names = (await readdir(folder)).sort();
  } catch {
    return;
  }
  for (const name of names) {
    if (name.startsWith('.phasebook-tmp-')) {
      await rm(join(folder, name), { recursive: true, force: true }).catch(() => undefined);
      onNotice?.(`${folder}: removed ${name}, the unfinished outputs of a run that was stopped`);
    } else if (name.startsWith(`${LOCK_NAME}.`)) {
      // A lock's owner text that a killed run had not yet linked or removed: nothing in it to keep.
      await rm(join(folder, name), { force: true }).catch(() => undefined);
    } else if (name.startsWith('.phasebook-old-')) {
      onNotice?.(
        `${folder}: found ${name}, the earlier version of an output kept by a run that was stopped while replacing its outputs; ` +
          'check the outputs beside it, then delete it',
      );
    }
  }
}

async function commitLocked(jobs: readonly WriteJob[], options: AtomicWriteOptions): Promise<void> {
  // A new set is not in place until its renames are done.
  outputsInPlace = false;
  interruptedAfterCommit = false;
  const force = options.force ?? false;
  const targets = jobs.map((j) => j.target);
  const twice = targets.find((t, i) => targets.indexOf(t) !== i);
  if (twice !== undefined) throw new Error(`commitAll: the output ${twice} is listed twice`);

  // 1. Check every target before writing anything. (A file created by someone
  //    else between this check and the rename would be replaced.)
  const obsolete = await earlierOutputs(targets, options.outputSet);
  await refuseInputsAsTargets([...targets, ...obsolete], options.inputs ?? []);
  const existed: boolean[] = [];
  const blocking: string[] = [];
  for (const target of targets) {
    let exists = false;
    try {
      const st = await lstat(target);
      exists = true;
      if (st.isDirectory()) throw new StopError('output', 'is a folder, expected a file name to write', { file: target });
      if (!force) blocking.push(target);
    } catch (err) {
      if (err instanceof StopError) throw err;
      if ((err as { code?: string }).code !== 'ENOENT') throw outputError(target, err);
    }
    existed.push(exists);
  }
  const stale = force ? [] : obsolete;
  const also = stale.length === 0 ? '' : `; --force also removes ${stale.join(', ')}, an earlier output that this run does not write`;
  if (blocking.length === 1) {
    throw new StopError('output', `already exists; use --force to replace it${also}`, { file: blocking[0] });
  }
  if (blocking.length > 1) {
    throw new StopError('output', `${blocking.length} outputs already exist (${blocking.join(', ')}); use --force to replace them${also}`, {
      file: blocking[0],
    });
  }
  if (stale.length > 0) {
    throw new StopError(
      'output',
      `${stale.length === 1 ? 'is an earlier output' : `and ${stale.length - 1} more are earlier outputs`} of this worklist that this run does not write ` +
        `(${stale.join(', ')}); use --force to replace the earlier outputs, which removes ${stale.length === 1 ? 'it' : 'them'}`,
      { file: stale[0] },
    );
  }

  // 2. Write every temp file: each lane's jobs in order, the lanes at the same time.
  //    After a failure no lane begins another job; once all have stopped, the temps go.
  const tempFolders = new Map<string, string>();
  for (const target of targets) {
    const folder = dirname(target);
    if (tempFolders.has(folder)) continue;
    try {
      const made = mkdtempSync(join(folder, '.phasebook-tmp-'));
      live.add(made);
      tempFolders.set(folder, made);
    } catch (err) {
      await removeAll([...tempFolders.values()]);
      throw outputError(target, err);
    }
  }
  const temps = targets.map((target) => join(tempFolders.get(dirname(target))!, basename(target)));
  const backups: (string | null)[] = [];
  const lanes = new Map<string, number[]>();
  jobs.forEach((job, i) => pushTo(lanes, job.lane ?? '', i));
  let failed = false;
  const settled = await Promise.allSettled(
    [...lanes.values()].map(async (indexes) => {
      for (const i of indexes) {
        if (failed) return;
        try {
          await jobs[i]!.write(temps[i]!);
          await fsyncFile(temps[i]!);
        } catch (err) {
          failed = true;
          throw outputError(jobs[i]!.target, err);
        }
      }
    }),
  );
  const failure = settled.find((r): r is PromiseRejectedResult => r.status === 'rejected');
  if (failure) {
    await removeAll([...tempFolders.values()]);
    throw failure.reason;
  }

  // 3. Rename into place, keeping a backup of each replaced file until all are in.
  //    A signal here waits (see interruptArrived): the set is rolled back, then commitAll throws Interrupted.
  let done = 0;
  const setAside: { path: string; aside: string }[] = [];
  renaming++;
  try {
    for (let i = 0; i < jobs.length; i++) {
      if (deferredExit !== null) throw new Error('interrupted');
      const target = jobs[i]!.target;
      let backup: string | null = null;
      if (existed[i]) {
        backup = backupName(target);
        live.add(backup);
        backups.push(backup);
        try {
          await link(target, backup);
        } catch {
          try {
            await copyFile(target, backup); // no hard links on this file system
          } catch (err) {
            throw outputError(target, err);
          }
        }
      } else {
        backups.push(null);
      }
      try {
        await rename(temps[i]!, target);
      } catch (err) {
        throw outputError(target, err);
      }
      done++;
    }
    // Earlier outputs this commit does not replace go aside with the backups (removed at the end).
    for (const path of obsolete) {
      if (deferredExit !== null) throw new Error('interrupted');
      const aside = backupName(path);
      live.add(aside);
      try {
        await rename(path, aside);
      } catch (err) {
        live.delete(aside);
        throw outputError(path, err);
      }
      setAside.push({ path, aside });
    }
    if (deferredExit !== null) throw new Error('interrupted');
    // Every output is in place: from here an interrupt no longer undoes the run (see onSignal).
    outputsInPlace = true;
  } catch (err) {
    for (const { path, aside } of setAside.reverse()) {
      try {
        await rename(aside, path);
      } catch {
        // Best effort, as below.
      }
    }
    for (let i = done - 1; i >= 0; i--) {
      const target = jobs[i]!.target;
      const backup = backups[i];
      try {
        if (backup) await rename(backup, target);
        else await unlink(target);
      } catch {
        // Best effort: the error below is what the user needs to see.
      }
    }
    await removeAll([...tempFolders.values(), ...backups.filter((b): b is string => b !== null), ...setAside.map((a) => a.aside)]);
    if (deferredExit !== null) {
      const code = deferredExit;
      deferredExit = null;
      throw new Interrupted(code);
    }
    throw err;
  } finally {
    renaming--;
  }
  await removeAll([...tempFolders.values(), ...backups.filter((b): b is string => b !== null), ...setAside.map((a) => a.aside)]);
  await fsyncFolders(targets);
}

/** Files of the output set's folder that belong to the set but are not targets of this commit. */
async function earlierOutputs(targets: readonly string[], set: AtomicWriteOptions['outputSet']): Promise<string[]> {
  if (!set) return [];
  let names: string[];
  try {
    names = await readdir(set.folder);
  } catch {
    return [];
  }
  const writing = new Set(targets.map((t) => resolve(t)));
  return names
    .filter((name) => set.belongs(name))
    .map((name) => join(set.folder, name))
    .filter((path) => !writing.has(resolve(path)))
    .sort();
}

/** commitAll calls in their rename phase, and the exit code of a signal that came meanwhile. */
let renaming = 0;
let deferredExit: number | null = null;
/** Set once a commit has put every output in place, and once an interrupt came after that. */
let outputsInPlace = false;
let interruptedAfterCommit = false;

/** What an interrupt may do at this moment (interruptArrived). */
export type InterruptDecision = 'deferred' | 'finishing' | 'now';

/**
 * The writer's word on an interrupt (SIGINT, SIGTERM) that just arrived with exit code `code`; the
 * command line owns the signals and acts on it (cli-signals.ts). This module never exits the process.
 * - 'deferred': outputs are being renamed into place, and stopping now would leave a mix of new and old
 *   outputs (and lose the backups of the replaced ones): commitAll puts every output back as it was and
 *   throws Interrupted(code).
 * - 'finishing': a commit has put every output in place and what is left (recording the history, the
 *   summary) takes no time: the run may finish as a completed run. Said once; the next interrupt is 'now'.
 * - 'now': nothing is half done; remove the live temp files (removeLiveTempFiles) and stop.
 */
export function interruptArrived(code: number): InterruptDecision {
  if (renaming > 0) {
    deferredExit = code;
    return 'deferred';
  }
  if (outputsInPlace && !interruptedAfterCommit) {
    interruptedAfterCommit = true;
    return 'finishing';
  }
  return 'now';
}

/**
 * Delete every live temp folder and backup file now (synchronous: usable in
 * signal and exit handlers). A file a writer creates in a temp folder while it
 * is being removed makes the removal try again.
 */
export function removeLiveTempFiles(): void {
  releaseAllLocksSync();
  for (const path of live) {
    try {
      rmSync(path, { recursive: true, force: true, maxRetries: 3, retryDelay: 10 });
    } catch {
      // Best effort: the process is stopping.
    }
    live.delete(path);
  }
}

/** Paths of the temp folders and backup files alive right now (for tests and diagnostics). */
export function liveTempFiles(): string[] {
  return [...live];
}

function backupName(target: string): string {
  return join(dirname(target), `.phasebook-old-${randomBytes(6).toString('hex')}-${basename(target)}`);
}

async function fsyncFile(path: string): Promise<void> {
  const fh = await open(path, 'r+');
  try {
    await fh.sync();
  } finally {
    await fh.close();
  }
}

/** Make the renames durable; not every platform can open a folder, so failures are ignored. */
async function fsyncFolders(targets: readonly string[]): Promise<void> {
  for (const folder of new Set(targets.map((t) => dirname(t)))) {
    try {
      const fh = await open(folder, 'r');
      try {
        await fh.sync();
      } finally {
        await fh.close();
      }
    } catch {
      // e.g. Windows: folders cannot be opened for fsync
    }
  }
}

/** Remove temp folders (with what is in them) and backup files. */
async function removeAll(paths: readonly string[]): Promise<void> {
  for (const p of paths) {
    try {
      await rm(p, { recursive: true, force: true, maxRetries: 3, retryDelay: 10 });
    } catch {
      // Best effort: the error the caller throws is what the user needs to see.
    }
    live.delete(p);
  }
}

/** A file-system error becomes a located StopError; a StopError or a bug passes through unchanged. */
function outputError(target: string, err: unknown): unknown {
  if (err instanceof StopError) return err;
  const code = (err as { code?: unknown } | null)?.code;
  if (typeof code !== 'string' || !code.startsWith('E')) return err;
  const reason = code === 'ENOENT' ? `the folder ${dirname(target)} does not exist` : fsReason(err);
  return new StopError('output', `cannot be written: ${reason}`, { file: target });
}
