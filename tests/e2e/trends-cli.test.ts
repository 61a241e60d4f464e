import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { TrendJson } from '../../src/history/trends.js';
import { lcsHistories } from '../report/fixtures.js';

/** `phasebook trends` through the built CLI (the command's own tests are in tests/history/trends.test.ts). */
let dir: string;
let twentyTwo: string;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'phasebook-trends-cli-'));
  ({ twentyTwo } = await lcsHistories(dir));
}, 120_000);

afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('the built CLI', () => {
  const cli = resolve('dist/cli.js');
  beforeAll(() => {
    if (!existsSync(cli)) throw new Error('dist/cli.js is missing: run `npm run build` first (npm test does)');
  });

  it('runs "phasebook trends --history FILE --json" and exits 0', () => {
    const res = spawnSync(process.execPath, [cli, 'trends', '--history', twentyTwo, '--json'], { encoding: 'utf8' });
    expect(res.stderr).toBe('');
    expect(res.status).toBe(0);
    expect((JSON.parse(res.stdout) as TrendJson[])[0]!.rules).toHaveLength(3);
  });

  it('exits 2 with a clear message for a file that is not a history', () => {
    const res = spawnSync(process.execPath, [cli, 'trends', '--history', join(dir, 'run-1.csv')], { encoding: 'utf8' });
    expect(res.status).toBe(2);
    expect(res.stderr).toContain(`phasebook: ${join(dir, 'run-1.csv')}: expected a phasebook QC history, got a file that is not an SQLite database`);
    expect(res.stdout).toBe('');
  });
});
