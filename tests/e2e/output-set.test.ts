/**
 * One run per output set (issue 19, point 4), through the built CLI: two runs into one
 * folder at the same time never both say they wrote; a --force re-run removes the
 * earlier run's batch reports that it does not write.
 */
import { spawn } from 'node:child_process';
import { readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
// @ts-expect-error: the bench generator is plain JavaScript (bench/generate.mjs)
import { writeWorklist } from '../../bench/generate.mjs';
import { CLI, ROOT, runCli, tempDir } from '../helpers/cli.js';

const GENERIC = join(ROOT, 'templates/generic-lle.yaml');
let root: string;
let worklist: string;
beforeAll(async () => {
  root = tempDir('phasebook-output-set-');
  worklist = join(root, 'night-run.csv');
  await writeWorklist(worklist, 3000, { seed: 11 }); // the bench's invented canonical worklist
});
afterAll(() => rmSync(root, { recursive: true, force: true }));

function cliAsync(args: string[]): Promise<{ code: number | null; stderr: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [CLI, ...args], { cwd: ROOT, stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    child.stderr.on('data', (d) => (stderr += d));
    child.on('error', reject);
    child.on('close', (code) => resolve({ code, stderr }));
  });
}

describe('two runs into one folder at once', () => {
  it.each([[false], [true]])('one writes, the other stops and says why (--force: %s)', async (force) => {
    const out = join(root, `race-${force}`);
    const args = ['recalc', worklist, '-m', GENERIC, '-o', out, '--outputs', 'csv,xlsx', ...(force ? ['--force'] : [])];
    const runs = await Promise.all([cliAsync(args), cliAsync(args)]);
    const wrote = runs.filter((r) => r.code === 0 || r.code === 1);
    const stopped = runs.filter((r) => r.code === 2);
    const seen = JSON.stringify(runs);
    if (force && stopped.length === 0) {
      // The second began after the first had finished: with --force it replaced the first's outputs, as asked.
      expect(wrote, seen).toHaveLength(2);
    } else {
      expect(wrote, seen).toHaveLength(1);
      expect(stopped, seen).toHaveLength(1);
      // Stopped by the lock while the other wrote, or, if it began after, by the outputs the other left.
      expect(stopped[0]!.stderr).toMatch(/another phasebook run is writing to this folder \(process \d+ on .+, since .+\)|already exist/);
      expect(stopped[0]!.stderr).toContain('Nothing was written.');
    }
    expect(readdirSync(out).sort()).toEqual(['night-run.results.csv', 'night-run.xlsx']);
  });
});

describe('a --force re-run', () => {
  it('removes the report of a batch that is no longer in the worklist', () => {
    const out = join(root, 'rerun');
    const wl = join(root, 'bench-day.csv');
    const text = readFileSync(join(ROOT, 'samples/kestrel-brook-2026-11.csv'), 'utf8');
    writeFileSync(wl, text);
    const method = join(ROOT, 'templates/surface-water.yaml');
    expect([0, 1]).toContain(runCli(['recalc', wl, '-m', method, '-o', out, '--quiet']).code);
    expect(readdirSync(out)).toContain('bench-day.MB-2611-A.report.html');
    // The same worklist, its batch renamed: the earlier batch's report is now stale.
    writeFileSync(wl, text.replaceAll('MB-2611-A', 'MB-2611-B'));
    const plain = runCli(['recalc', wl, '-m', method, '-o', out]);
    expect(plain.code).toBe(2);
    expect(plain.stderr).toContain('use --force to replace them; --force also removes');
    const forced = runCli(['recalc', wl, '-m', method, '-o', out, '--force', '--quiet']);
    expect([0, 1]).toContain(forced.code);
    expect(readdirSync(out).sort()).toEqual(['bench-day.MB-2611-B.report.html', 'bench-day.results.csv', 'bench-day.xlsx']);
  });
});
