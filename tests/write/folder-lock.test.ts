import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { hostname, tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeEach, describe, expect, it, vi } from 'vitest';
import { commitAll } from '../../src/write/atomic.js';
import { LOCK_NAME, lockFolder } from '../../src/write/folder-lock.js';
import { stopOf } from '../helpers/stop.js';

let root: string;
let dir: string;
let k = 0;
beforeEach(async () => {
  root ??= await mkdtemp(join(tmpdir(), 'phasebook-lock-'));
  dir = join(root, `case${k++}`);
  await mkdir(dir);
});
afterAll(async () => rm(root, { recursive: true, force: true }));

const text = (content: string) => async (tmp: string) => writeFile(tmp, content);
const lockOf = (pid: number, since = '2026-12-04T10:00:00.000Z') => JSON.stringify({ pid, host: hostname(), since }) + '\n';
/** The id of a process that has ended (a finished child's). */
const deadPid = () => spawnSync(process.execPath, ['-e', '0']).pid!;


describe('the output folder lock', () => {
  it('is held while the commit writes and gone afterwards', async () => {
    let seen: string[] = [];
    await commitAll([{ target: join(dir, 'a.csv'), write: async (tmp) => {
      seen = await readdir(dir);
      await writeFile(tmp, 'x');
    } }]);
    expect(seen).toContain(LOCK_NAME);
    expect(await readdir(dir)).toEqual(['a.csv']);
  });

  it('stops a second run while a live process holds it, naming that process', async () => {
    await writeFile(join(dir, LOCK_NAME), lockOf(process.pid));
    const write = vi.fn(text('x'));
    const err = await stopOf(commitAll([{ target: join(dir, 'a.csv'), write }], { force: true }));
    expect(err.describe()).toBe(
      `${dir}: another phasebook run is writing to this folder (process ${process.pid} on ${hostname()}, since 2026-12-04T10:00:00.000Z); ` +
        'wait for it to finish or choose another output folder with --out',
    );
    expect(write).not.toHaveBeenCalled();
    // The other run's lock is left alone.
    expect(await readFile(join(dir, LOCK_NAME), 'utf8')).toBe(lockOf(process.pid));
  });

  it('takes over a stale lock of a process that no longer runs, and says so', async () => {
    const pid = deadPid();
    await writeFile(join(dir, LOCK_NAME), lockOf(pid));
    const notices: string[] = [];
    await commitAll([{ target: join(dir, 'a.csv'), write: text('x') }], { onNotice: (t) => notices.push(t) });
    expect(notices).toEqual([`${dir}: removed a stale lock left by process ${pid} (started 2026-12-04T10:00:00.000Z), which no longer runs`]);
    expect(await readdir(dir)).toEqual(['a.csv']);
  });

  it('treats an unreadable lock as held and says how to clear it', async () => {
    await writeFile(join(dir, LOCK_NAME), 'garbage');
    const err = await stopOf(lockFolder(dir));
    expect(err.message).toBe(
      'another phasebook run is writing to this folder (a lock file whose owner cannot be read); wait for it to finish or choose another ' +
        `output folder with --out; if no phasebook run is writing there, delete ${join(dir, LOCK_NAME)}`,
    );
  });
});

describe('leftovers of a run that was killed', () => {
  it('removes its temp folders and reports, but keeps, the earlier versions it had set aside', async () => {
    await mkdir(join(dir, '.phasebook-tmp-AbC123'));
    await writeFile(join(dir, '.phasebook-tmp-AbC123', 'run.xlsx'), 'half');
    await writeFile(join(dir, '.phasebook-old-0a1b2c3d4e5f-run.xlsx'), 'earlier');
    const notices: string[] = [];
    await commitAll([{ target: join(dir, 'run.results.csv'), write: text('x') }], { onNotice: (t) => notices.push(t) });
    expect(notices).toEqual([
      `${dir}: found .phasebook-old-0a1b2c3d4e5f-run.xlsx, the earlier version of an output kept by a run that was stopped while ` +
        'replacing its outputs; check the outputs beside it, then delete it',
      `${dir}: removed .phasebook-tmp-AbC123, the unfinished outputs of a run that was stopped`,
    ]);
    expect((await readdir(dir)).sort()).toEqual(['.phasebook-old-0a1b2c3d4e5f-run.xlsx', 'run.results.csv']);
  });
});

describe('earlier outputs of the same set', () => {
  const set = () => ({ folder: dir, belongs: (name: string) => name.startsWith('run.') && name.endsWith('.report.html') });

  it('stop the run without force, naming the earlier output', async () => {
    await writeFile(join(dir, 'run.B-OLD.report.html'), 'old');
    const write = vi.fn(text('x'));
    const err = await stopOf(commitAll([{ target: join(dir, 'run.B-NEW.report.html'), write }], { outputSet: set() }));
    expect(err.describe()).toBe(
      `${join(dir, 'run.B-OLD.report.html')}: is an earlier output of this worklist that this run does not write ` +
        `(${join(dir, 'run.B-OLD.report.html')}); use --force to replace the earlier outputs, which removes it`,
    );
    expect(write).not.toHaveBeenCalled();
  });

  it('are removed with force, in the same commit, and nothing else is', async () => {
    await writeFile(join(dir, 'run.B-OLD.report.html'), 'old');
    await writeFile(join(dir, 'other.B-OLD.report.html'), 'another worklist');
    await commitAll([{ target: join(dir, 'run.B-NEW.report.html'), write: text('new') }], { force: true, outputSet: set() });
    expect((await readdir(dir)).sort()).toEqual(['other.B-OLD.report.html', 'run.B-NEW.report.html']);
  });

  it('stay as they were when the commit fails', async () => {
    await writeFile(join(dir, 'run.B-OLD.report.html'), 'old');
    const failing = async () => {
      throw Object.assign(new Error('ENOSPC'), { code: 'ENOSPC' });
    };
    const err = await stopOf(
      commitAll([{ target: join(dir, 'run.B-NEW.report.html'), write: failing }], { force: true, outputSet: set() }),
    );
    expect(err.message).toBe('cannot be written: the disk is full');
    expect(await readdir(dir)).toEqual(['run.B-OLD.report.html']);
    expect(existsSync(join(dir, LOCK_NAME))).toBe(false);
  });
});
