import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

export const ROOT = resolve(import.meta.dirname, '../..');
export const CLI = join(ROOT, 'dist/cli.js');

/** Run the built CLI (npm test builds dist/ first); `cli` runs another copy of the entry. */
export function runCli(args: string[], options: { cwd?: string; env?: NodeJS.ProcessEnv; input?: string; cli?: string; nodeArgs?: string[] } = {}) {
  if (!existsSync(CLI)) throw new Error('dist/cli.js is missing: run `npm run build` first (npm test does)');
  const r = spawnSync(process.execPath, [...(options.nodeArgs ?? []), options.cli ?? CLI, ...args], {
    cwd: options.cwd ?? ROOT,
    env: { ...process.env, ...options.env },
    input: options.input,
    encoding: 'utf8',
    timeout: 120_000,
  });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

export function tempDir(prefix = 'phasebook-test-'): string {
  return mkdtempSync(join(tmpdir(), prefix));
}
