/**
 * The command line's signal handlers (src/cli-signals.ts) over the writer's word on an interrupt
 * (write/atomic.ts, interruptArrived): a signal removes the live temp files and exits with 128 + the
 * signal number, waits while outputs are renamed into place (tests/e2e/atomic-interrupt.test.ts), and
 * lets a run whose outputs are complete finish.
 */
import { existsSync } from 'node:fs';
import { mkdir, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { installSignalHandlers } from '../src/cli-signals.js';
import { commitAll, liveTempFiles, writeFileAtomic } from '../src/write/atomic.js';

let root: string;
let dir: string;
let k = 0;

beforeEach(async () => {
  root ??= await mkdtemp(join(tmpdir(), 'phasebook-signals-'));
  dir = join(root, `case${k++}`);
  await mkdir(dir);
});
afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

const text = (content: string) => async (tmp: string) => writeFile(tmp, content);

describe('installSignalHandlers', () => {
  const events = ['SIGINT', 'SIGTERM', 'exit'] as const;
  let before: Record<string, Function[]>;

  beforeEach(() => {
    before = Object.fromEntries(events.map((e) => [e, process.listeners(e)]));
  });
  afterEach(() => {
    // Remove what the test installed so the test worker keeps its own handlers only.
    for (const e of events) {
      for (const l of process.listeners(e)) if (!before[e]!.includes(l)) process.removeListener(e, l as () => void);
    }
    vi.restoreAllMocks();
  });

  const added = (e: (typeof events)[number]) => process.listeners(e).filter((l) => !before[e]!.includes(l));

  it('installs one handler per event however often it is called', () => {
    installSignalHandlers();
    installSignalHandlers();
    for (const e of events) expect(added(e)).toHaveLength(1);
  });

  it.each([
    ['SIGINT', 130],
    ['SIGTERM', 143],
  ] as const)('on %s removes live temp files, then exits with %d', async (signal, code) => {
    // Exit codes: 128 + signal number (common practice; POSIX shells report a death by signal that way).
    installSignalHandlers();
    const [handler] = added(signal);
    const exit = vi.spyOn(process, 'exit').mockImplementation((() => undefined) as never);
    const target = join(dir, 'out.csv');
    let tmpSeen = '';
    const run = writeFileAtomic(target, async (tmp) => {
      tmpSeen = tmp;
      await writeFile(tmp, 'partial');
      expect(existsSync(tmp)).toBe(true);
      (handler as () => void)();
      expect(existsSync(tmp)).toBe(false);
    });
    await expect(run).rejects.toBeDefined(); // exit was mocked, so the write goes on and fails
    expect(exit).toHaveBeenCalledWith(code);
    expect(tmpSeen).not.toBe('');
    expect(existsSync(target)).toBe(false);
    expect(await readdir(dir)).toEqual([]);
    expect(liveTempFiles()).toEqual([]);
  });
});

describe('an interrupt after the outputs are in place', () => {
  it('lets the run finish and says so; a second interrupt stops it at once', async () => {
    const events = ['SIGINT', 'SIGTERM', 'exit'] as const;
    const before = Object.fromEntries(events.map((e) => [e, process.listeners(e)]));
    installSignalHandlers();
    const handler = process.listeners('SIGINT').find((l) => !before.SIGINT!.includes(l)) as () => void;
    const exit = vi.spyOn(process, 'exit').mockImplementation((() => undefined) as never);
    const said = vi.spyOn(process.stderr, 'write').mockImplementation(() => true);
    try {
      await commitAll([{ target: join(dir, 'done.csv'), write: text('x') }]);
      handler();
      expect(exit).not.toHaveBeenCalled();
      expect(said).toHaveBeenCalledWith('phasebook: interrupted after the outputs were complete; finishing the run\n');
      expect(await readFile(join(dir, 'done.csv'), 'utf8')).toBe('x');
      handler();
      expect(exit).toHaveBeenCalledWith(130);
    } finally {
      for (const e of events) for (const l of process.listeners(e)) if (!before[e]!.includes(l)) process.removeListener(e, l as () => void);
      vi.restoreAllMocks();
    }
  });
});
