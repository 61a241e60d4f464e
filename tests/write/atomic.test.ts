import { existsSync } from 'node:fs';
import { mkdir, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { basename, dirname, join } from 'node:path';
import { afterAll, beforeEach, describe, expect, it, vi } from 'vitest';
import { StopError } from '../../src/errors.js';
import { commitAll, liveTempFiles, removeLiveTempFiles, writeFileAtomic } from '../../src/write/atomic.js';
import { stopOf } from '../helpers/stop.js';

let root: string;
let dir: string;
let k = 0;

beforeEach(async () => {
  root ??= await mkdtemp(join(tmpdir(), 'phasebook-atomic-'));
  dir = join(root, `case${k++}`);
  await mkdir(dir);
});
afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

const text = (content: string) => async (tmp: string) => writeFile(tmp, content);


describe('writeFileAtomic', () => {
  it('writes through a temp file in the same folder and leaves only the target', async () => {
    const target = join(dir, 'results.csv');
    let seenTmp = '';
    await writeFileAtomic(target, async (tmp) => {
      seenTmp = tmp;
      await writeFile(tmp, 'a,b\n');
    });
    // In a temp folder of the commit's own, next to the target.
    expect(dirname(dirname(seenTmp))).toBe(dir);
    expect(basename(dirname(seenTmp))).toMatch(/^\.phasebook-tmp-\w{6}$/);
    expect(basename(seenTmp)).toBe('results.csv');
    expect(await readFile(target, 'utf8')).toBe('a,b\n');
    expect(await readdir(dir)).toEqual(['results.csv']);
    expect(liveTempFiles()).toEqual([]);
  });

  it('refuses an existing target without force, before writing anything', async () => {
    const target = join(dir, 'out.csv');
    await writeFile(target, 'old');
    const write = vi.fn(text('new'));
    const err = await stopOf(writeFileAtomic(target, write));
    expect(err.kind).toBe('output');
    expect(err.describe()).toBe(`${target}: already exists; use --force to replace it`);
    expect(write).not.toHaveBeenCalled();
    expect(await readFile(target, 'utf8')).toBe('old');
  });

  it('replaces an existing target with force and leaves no backup', async () => {
    const target = join(dir, 'out.csv');
    await writeFile(target, 'old');
    await writeFileAtomic(target, text('new'), { force: true });
    expect(await readFile(target, 'utf8')).toBe('new');
    expect(await readdir(dir)).toEqual(['out.csv']);
  });

  it.each([
    {
      name: 'a StopError from the writer passes through unchanged',
      fail: async (tmp: string) => {
        await writeFile(tmp, 'half');
        throw new StopError('output', 'the writer gave up', { file: 'x' });
      },
      check: (err: unknown) => expect((err as StopError).message).toBe('the writer gave up'),
    },
    {
      name: 'a file-system error becomes a located StopError',
      fail: async (tmp: string) => {
        await writeFile(tmp, 'half');
        throw Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC' });
      },
      check: (err: unknown) => {
        expect(err).toBeInstanceOf(StopError);
        expect((err as StopError).message).toBe('cannot be written: the disk is full');
      },
    },
    {
      name: 'a programming error passes through as it is',
      fail: async (tmp: string) => {
        await writeFile(tmp, 'half');
        throw new TypeError('bug');
      },
      check: (err: unknown) => expect(err).toBeInstanceOf(TypeError),
    },
  ])('on failure removes the temp and keeps the old file: $name', async ({ fail, check }) => {
    const target = join(dir, 'out.csv');
    await writeFile(target, 'old');
    let caught: unknown;
    try {
      await writeFileAtomic(target, fail, { force: true });
    } catch (err) {
      caught = err;
    }
    check(caught);
    expect(await readFile(target, 'utf8')).toBe('old');
    expect(await readdir(dir)).toEqual(['out.csv']);
    expect(liveTempFiles()).toEqual([]);
  });

  it('a missing folder is a located output stop', async () => {
    const target = join(dir, 'no-such-folder', 'out.csv');
    const err = await stopOf(writeFileAtomic(target, text('x')));
    expect(err.kind).toBe('output');
    expect(err.describe()).toBe(`${target}: cannot be written: the folder ${dirname(target)} does not exist`);
  });

  it('a target that is a folder is refused even with force', async () => {
    const target = join(dir, 'folder');
    await mkdir(target);
    const err = await stopOf(writeFileAtomic(target, text('x'), { force: true }));
    expect(err.describe()).toBe(`${target}: is a folder, expected a file name to write`);
  });
});

describe('commitAll', () => {
  it('writes every output', async () => {
    const a = join(dir, 'a.xlsx');
    const b = join(dir, 'b.csv');
    await commitAll([
      { target: a, write: text('A') },
      { target: b, write: text('B') },
    ]);
    expect(await readFile(a, 'utf8')).toBe('A');
    expect(await readFile(b, 'utf8')).toBe('B');
    expect((await readdir(dir)).sort()).toEqual(['a.xlsx', 'b.csv']);
  });

  it('checks every target before writing any (all existing ones named)', async () => {
    const a = join(dir, 'a.xlsx');
    const b = join(dir, 'b.csv');
    const c = join(dir, 'c.csv');
    await writeFile(b, 'old b');
    await writeFile(c, 'old c');
    const write = vi.fn(text('new'));
    const err = await stopOf(
      commitAll([
        { target: a, write },
        { target: b, write },
        { target: c, write },
      ]),
    );
    expect(err.kind).toBe('output');
    expect(err.message).toBe(`2 outputs already exist (${b}, ${c}); use --force to replace them`);
    expect(write).not.toHaveBeenCalled();
    expect(existsSync(a)).toBe(false);
  });

  it('a failure in the second output leaves none of the new files', async () => {
    const a = join(dir, 'a.xlsx');
    const b = join(dir, 'b.csv');
    await writeFile(a, 'old a');
    const err = await stopOf(
      commitAll(
        [
          { target: a, write: text('new a') },
          {
            target: b,
            write: async (tmp) => {
              await writeFile(tmp, 'half');
              throw Object.assign(new Error('EACCES'), { code: 'EACCES' });
            },
          },
        ],
        { force: true },
      ),
    );
    expect(err.describe()).toBe(`${b}: cannot be written: permission denied`);
    expect(await readFile(a, 'utf8')).toBe('old a');
    expect(await readdir(dir)).toEqual(['a.xlsx']);
    expect(liveTempFiles()).toEqual([]);
  });

  it.each([
    { name: 'with force, an old first file is put back', oldA: 'old a' as string | null },
    { name: 'a new first file is removed', oldA: null },
  ])('a rename failing part-way undoes the renames before it: $name', async ({ oldA }) => {
    const a = join(dir, 'a.xlsx');
    const b = join(dir, 'b.csv');
    if (oldA !== null) await writeFile(a, oldA);
    // The second writer turns its own target into a folder, so its rename fails after a's.
    const err = await stopOf(
      commitAll(
        [
          { target: a, write: text('new a') },
          {
            target: b,
            write: async (tmp) => {
              await writeFile(tmp, 'new b');
              await mkdir(b);
            },
          },
        ],
        { force: true },
      ),
    );
    expect(err.kind).toBe('output');
    expect(err.location.file).toBe(b);
    if (oldA === null) expect(existsSync(a)).toBe(false);
    else expect(await readFile(a, 'utf8')).toBe(oldA);
    expect((await readdir(dir)).sort()).toEqual(oldA === null ? ['b.csv'] : ['a.xlsx', 'b.csv']);
    expect(liveTempFiles()).toEqual([]);
  });
});

describe('commitAll lanes', () => {
  /**
   * A promise and its resolve, for a job to wait on a job of another lane. The wait
   * fails after 5 s: were the lanes written one after another, it would never end.
   */
  function gate() {
    let open!: () => void;
    const opened = new Promise<void>((resolve) => (open = resolve));
    const timeout = (): Promise<never> =>
      new Promise((_, reject) => setTimeout(() => reject(new Error('the lanes were written one after another')), 5000).unref());
    return { open, opened: () => Promise.race([opened, timeout()]) };
  }

  it('writes the jobs of different lanes at the same time, and each lane in its order', async () => {
    const events: string[] = [];
    const reportStarted = gate();
    const job = (name: string, lane: string | undefined, before?: () => Promise<void>, after?: () => void) => ({
      target: join(dir, name),
      lane,
      write: async (tmp: string) => {
        events.push(`start ${name}`);
        after?.();
        // The workbook waits for a report that only a lane of its own can have begun.
        await before?.();
        await writeFile(tmp, name);
        events.push(`end ${name}`);
      },
    });
    await commitAll([
      job('a.csv', undefined),
      job('a.xlsx', undefined, reportStarted.opened),
      job('a.1.report.html', 'reports', undefined, reportStarted.open),
      job('a.2.report.html', 'reports'),
    ]);
    expect((await readdir(dir)).sort()).toEqual(['a.1.report.html', 'a.2.report.html', 'a.csv', 'a.xlsx']);
    expect(await readFile(join(dir, 'a.2.report.html'), 'utf8')).toBe('a.2.report.html');
    // Within a lane, a job begins when the one before it has ended.
    const at = (e: string) => events.indexOf(e);
    expect(at('end a.csv')).toBeLessThan(at('start a.xlsx'));
    expect(at('end a.1.report.html')).toBeLessThan(at('start a.2.report.html'));
    expect(at('start a.1.report.html')).toBeLessThan(at('end a.xlsx'));
    expect(liveTempFiles()).toEqual([]);
  });

  it('after a failure in one lane no lane begins another job, and none of the new files is left', async () => {
    const started: string[] = [];
    const failNow = gate();
    const failing = gate();
    const err = await stopOf(
      commitAll([
        {
          target: join(dir, 'a.xlsx'),
          write: async (tmp) => {
            started.push('a.xlsx');
            await failNow.opened();
            await writeFile(tmp, 'half');
            failing.open();
            throw Object.assign(new Error('ENOSPC'), { code: 'ENOSPC' });
          },
        },
        { target: join(dir, 'b.csv'), write: async (tmp) => (started.push('b.csv'), writeFile(tmp, 'b')) },
        {
          target: join(dir, 'a.1.report.html'),
          lane: 'reports',
          write: async (tmp) => {
            started.push('a.1.report.html');
            await writeFile(tmp, 'r1');
            failNow.open();
            await failing.opened();
            await new Promise((r) => setImmediate(r)); // the workbook's failure is seen before this job ends
          },
        },
        { target: join(dir, 'a.2.report.html'), lane: 'reports', write: async (tmp) => (started.push('a.2.report.html'), writeFile(tmp, 'r2')) },
      ]),
    );
    expect(err.describe()).toBe(`${join(dir, 'a.xlsx')}: cannot be written: the disk is full`);
    expect(started).toEqual(['a.xlsx', 'a.1.report.html']);
    expect(await readdir(dir)).toEqual([]);
    expect(liveTempFiles()).toEqual([]);
  });
});

describe('commitAll and a file created after Ctrl-C removed the temps', () => {
  it('cannot leave that file behind: it would be created in the removed temp folder, which fails', async () => {
    // What the signal handler does, while a writer (say, a stream whose open was still queued) has yet to create its file.
    const err = await stopOf(
      commitAll([
        {
          target: join(dir, 'late.csv'),
          write: async (tmp) => {
            removeLiveTempFiles();
            await writeFile(tmp, 'late');
          },
        },
      ]),
    );
    expect(err.describe()).toMatch(/late\.csv: cannot be written: the folder .* does not exist$/);
    expect(await readdir(dir)).toEqual([]);
    expect(liveTempFiles()).toEqual([]);
  });
});

describe('commitAll never replaces an input', () => {
  it('refuses a target that is an input, with force, before writing anything', async () => {
    const history = join(dir, 'qc-history.sqlite');
    await writeFile(history, 'history');
    const write = vi.fn(text('new'));
    const err = await stopOf(
      commitAll([{ target: join(dir, 'a.csv'), write }, { target: history, write }], {
        force: true,
        inputs: [{ path: history, role: 'the QC history' }],
      }),
    );
    expect(err.describe()).toBe(
      `${history}: would replace the QC history "${history}"; an input is never replaced, even with --force: choose another output folder with --out`,
    );
    expect(write).not.toHaveBeenCalled();
    expect(await readFile(history, 'utf8')).toBe('history');
    expect((await readdir(dir)).sort()).toEqual(['qc-history.sqlite']);
  });

  it('skips an input that does not exist yet (a new history file) and writes the rest', async () => {
    const target = join(dir, 'a.csv');
    await commitAll([{ target, write: text('x') }], { inputs: [{ path: join(dir, 'new.sqlite'), role: 'the QC history' }] });
    expect(await readFile(target, 'utf8')).toBe('x');
  });
});
