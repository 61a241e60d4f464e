/**
 * A failing disk is an error, always (issue 19, point 1), through the built CLI: every
 * write into the out folder fails with ENOSPC, EIO or EACCES after a budget of bytes
 * (tests/helpers/fail-writes.cjs, preloaded), at the first byte, part-way through the
 * smallest output and part-way through the workbook. Each run must exit 2, say which
 * output could not be written and why, leave the out folder empty (no output, no temp)
 * and leave the worklist as it was. Found before: a full disk while the workbook was
 * written ended the process with exit 0, no message and no file.
 */
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
// @ts-expect-error: the bench generator is plain JavaScript (bench/generate.mjs)
import { writeWorklist } from '../../bench/generate.mjs';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';

const WORKLIST = 'samples/kestrel-brook-2026-11.csv';
const METHOD = 'templates/surface-water.yaml';
const INJECT = join(ROOT, 'tests/helpers/fail-writes.cjs');
const REASONS: Record<string, string> = {
  ENOSPC: 'the disk is full',
  EIO: 'the disk reported an input/output error',
  EACCES: 'permission denied',
};

let root: string;
const sha = () => createHash('sha256').update(readFileSync(join(ROOT, WORKLIST))).digest('hex');
let before: string;
let large: string;
beforeAll(async () => {
  root = tempDir('phasebook-faults-');
  before = sha();
  large = join(root, 'large.csv');
  await writeWorklist(large, 3000, { seed: 7 }); // the bench's invented canonical worklist
});
afterAll(() => rmSync(root, { recursive: true, force: true }));

let k = 0;
function failingRun(outputs: string, code: string, after: number) {
  const out = join(root, `out${k++}`);
  const r = runCli(['recalc', WORKLIST, '-m', METHOD, '-o', out, '--outputs', outputs, '--timestamp', '2026-11-20T16:00:00Z'], {
    nodeArgs: ['--require', INJECT],
    env: { FAIL_WRITES_DIR: out, FAIL_WRITES_CODE: code, FAIL_WRITES_AFTER: String(after) },
  });
  return { ...r, left: existsSync(out) ? readdirSync(out) : [] };
}

describe('a write that fails stops the run with exit 2 and leaves nothing', () => {
  // Byte budgets: nothing, part of the results CSV (about 7 KB), part of the workbook or a report (about 55 KB each).
  const cases: [string, string, number][] = [];
  for (const outputs of ['csv', 'xlsx', 'html', 'csv,xlsx,html']) {
    for (const code of Object.keys(REASONS)) for (const after of [0, 3000, 30000]) cases.push([outputs, code, after]);
  }
  it.each(cases)('--outputs %s, %s after %i bytes', (outputs, code, after) => {
    const r = failingRun(outputs, code, after);
    if (outputs === 'csv' && after === 30000) {
      // The CSV is smaller than the budget: it is written in full and the run ends as usual.
      expect(r.code).toBe(0);
      expect(r.left).toEqual(['kestrel-brook-2026-11.results.csv']);
      return;
    }
    expect(r.code).toBe(2);
    // The first write into the folder is the run's lock: at 0 bytes that is what cannot be written.
    const what = after === 0 ? "cannot take the output folder's lock" : 'cannot be written';
    expect(r.stderr).toMatch(new RegExp(`^phasebook: \\S+: ${what}: ${REASONS[code]}\\nNothing was written\\.\\n$`));
    expect(r.left).toEqual([]);
    expect(sha()).toBe(before);
  });
});

describe('a workbook large enough to wait on the disk', () => {
  // The case found: the workbook's writer waits for the disk to take its data; when the
  // write failed it waited for ever, the event loop ran dry and the process exited 0.
  it.each([
    ['xlsx', 'ENOSPC', 1000],
    ['xlsx', 'ENOSPC', 200_000],
    ['csv,xlsx,html', 'EIO', 400_000],
  ])('--outputs %s, %s after %i bytes', (outputs, code, after) => {
    const out = join(root, `large${k++}`);
    const r = runCli(['recalc', large, '-m', 'templates/generic-lle.yaml', '-o', out, '--outputs', outputs, '--quiet'], {
      nodeArgs: ['--require', INJECT],
      env: { FAIL_WRITES_DIR: out, FAIL_WRITES_CODE: code, FAIL_WRITES_AFTER: String(after) },
    });
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(new RegExp(`^phasebook: \\S+: cannot be written: ${REASONS[code]}\\nNothing was written\\.\\n$`));
    expect(existsSync(out) ? readdirSync(out) : []).toEqual([]);
  });
});

describe('a write that never answers', () => {
  it.each(['csv', 'xlsx', 'html'])('--outputs %s: the process never exits 0 with its outputs pending', (outputs) => {
    const out = join(root, `hang${k++}`);
    const r = runCli(['recalc', WORKLIST, '-m', METHOD, '-o', out, '--outputs', outputs], {
      nodeArgs: ['--require', INJECT],
      env: { FAIL_WRITES_DIR: out, FAIL_WRITES_CODE: 'HANG', FAIL_WRITES_AFTER: '200' }, // past the lock: the outputs' writes hang
    });
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('phasebook: the run ended before it finished: an operation never completed (please report this)\nNothing was written.\n');
    expect(existsSync(out) ? readdirSync(out) : []).toEqual([]);
  });
});

describe('the same runs without a fault', () => {
  it('write every output and exit 0 (the injector is inert without FAIL_WRITES_DIR)', () => {
    const out = join(root, 'clean');
    const r = runCli(['recalc', WORKLIST, '-m', METHOD, '-o', out, '--quiet'], { nodeArgs: ['--require', INJECT] });
    expect(r.code).toBe(0);
    expect(readdirSync(out).sort()).toEqual([
      'kestrel-brook-2026-11.MB-2611-A.report.html',
      'kestrel-brook-2026-11.results.csv',
      'kestrel-brook-2026-11.xlsx',
    ]);
  });
});

describe('a read-only file system', () => {
  // A real read-only mount (a small tmpfs) where the test runs as root and may mount; elsewhere there is none to try.
  let mnt = '';
  beforeAll(() => {
    const dir = join(root, 'ro');
    mkdirSync(dir);
    if (process.getuid?.() === 0 && spawnSync('mount', ['-t', 'tmpfs', '-o', 'size=64k,ro', 'tmpfs', dir]).status === 0) mnt = dir;
  });
  afterAll(() => {
    if (mnt) spawnSync('umount', [mnt]);
  });

  it('is named as read-only, not "no such file", for a folder to be made and for the folder itself', (ctx) => {
    if (!mnt) ctx.skip();
    for (const out of [join(mnt, 'results', 'today'), mnt]) {
      const r = runCli(['recalc', WORKLIST, '-m', METHOD, '-o', out]);
      expect(r.code).toBe(2);
      expect(r.stderr).toMatch(/the file system is read-only\nNothing was written\.\n$/);
    }
  });
});
