/**
 * Exit 2 means nothing was written, with a QC history too (issue 19, point 6), through
 * the built CLI: the history is opened and its write lock taken before anything is
 * written, the run's controls are recorded in the same step as the outputs, and a run
 * that stops leaves neither outputs nor a history it created.
 */
import Database from 'better-sqlite3';
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CLI, ROOT, runCli, tempDir } from '../helpers/cli.js';

const WORKLIST = 'samples/kestrel-brook-2026-11.csv';
const METHOD = 'templates/surface-water.yaml';
let root: string;
beforeAll(() => {
  root = tempDir('phasebook-history-run-');
});
afterAll(() => rmSync(root, { recursive: true, force: true }));

const recalc = (out: string, history: string, extra: string[] = []) =>
  runCli(['recalc', WORKLIST, '-m', METHOD, '-o', out, '--history', history, '--timestamp', '2026-11-20T16:00:00Z', ...extra]);

const controlsIn = (file: string) => {
  const db = new Database(file, { readonly: true });
  try {
    return db.prepare('SELECT count(*) FROM controls').pluck().get() as number;
  } finally {
    db.close();
  }
};

describe('a history another process holds', () => {
  it('stops the run before anything is written, and the history is untouched', async () => {
    const history = join(root, 'held.sqlite');
    const out = join(root, 'out-held');
    expect(recalc(join(root, 'first'), history, ['--quiet']).code).toBe(0); // a history with one run
    const before = controlsIn(history);
    // Another process holds the write lock (an open IMMEDIATE transaction) for 8 s.
    const holder = spawn(process.execPath, [
      '-e',
      `const D = require(${JSON.stringify(join(ROOT, 'node_modules/better-sqlite3'))}); const db = new D(${JSON.stringify(history)});` +
        `db.exec('BEGIN IMMEDIATE'); process.stdout.write('held\\n'); setTimeout(() => db.exec('ROLLBACK'), 8000);`,
    ]);
    await new Promise((resolve) => holder.stdout.once('data', resolve));
    const r = recalc(out, history);
    holder.kill();
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(`phasebook: ${history}: the QC history is busy: another process holds it; try again\nNothing was written.\n`);
    expect(existsSync(out)).toBe(false);
    expect(controlsIn(history)).toBe(before);
  });
});

describe('a run that stops after the history was opened', () => {
  it('leaves no new history file behind', () => {
    const history = join(root, 'new.sqlite');
    const out = join(root, 'out-existing');
    mkdirSync(out);
    writeFileSync(join(out, 'kestrel-brook-2026-11.results.csv'), 'an earlier output');
    const r = recalc(out, history);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('already exists; use --force to replace it');
    expect(existsSync(history)).toBe(false);
    expect(readdirSync(root).filter((n) => n.startsWith('new.sqlite'))).toEqual([]);
  });

  it('leaves an existing history without the run', () => {
    const history = join(root, 'kept.sqlite');
    expect(recalc(join(root, 'kept-first'), history, ['--quiet']).code).toBe(0);
    const before = controlsIn(history);
    const out = join(root, 'out-bad');
    const r = runCli(['recalc', 'no-such-worklist.csv', '-m', METHOD, '-o', out, '--history', history]);
    expect(r.code).toBe(2);
    expect(existsSync(out)).toBe(false);
    expect(controlsIn(history)).toBe(before);
  });
});

describe('a run that completes', () => {
  it('writes the outputs and records its controls together', () => {
    const history = join(root, 'together.sqlite');
    const out = join(root, 'out-together');
    const r = recalc(out, history);
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(/Recorded \d+ control rows in .*together\.sqlite\.\n$/);
    expect(readdirSync(out)).toHaveLength(3);
    expect(controlsIn(history)).toBeGreaterThan(0);
  });
});
