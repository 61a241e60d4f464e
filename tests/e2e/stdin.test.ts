/**
 * `recalc -` (issue 18, point 3): a CSV worklist on standard input, through the built CLI.
 * The outputs take their names from --name (default "stdin"), messages name standard
 * input rather than a temporary file, and the spooled copy is removed afterwards.
 */
import { mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { ROOT, runCli } from '../helpers/cli.js';

const dir = mkdtempSync(join(tmpdir(), 'phasebook-stdin-test-'));
const spool = join(dir, 'tmp');
mkdirSync(spool);
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const demo = readFileSync(join(ROOT, 'samples/kestrel-brook-2026-11.csv'), 'utf8');
// TMPDIR points the spooled copy into a folder of this test's own, to see that it goes.
const env = { TMPDIR: spool };

describe('recalc -', () => {
  it('reads the worklist from standard input and names the outputs after --name', () => {
    const out = join(dir, 'named');
    const r = runCli(['recalc', '-', '-m', 'surface-water', '-o', out, '--name', 'kestrel-brook', '--outputs', 'csv,xlsx'], { input: demo, env });
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(/^phasebook: read 44 rows from standard input with method surface-water;/);
    expect(readdirSync(out).sort()).toEqual(['kestrel-brook.results.csv', 'kestrel-brook.xlsx']);
    // The same results as from the file itself.
    const fromFile = join(dir, 'file');
    expect(runCli(['recalc', 'samples/kestrel-brook-2026-11.csv', '-m', 'surface-water', '-o', fromFile, '--outputs', 'csv']).code).toBe(0);
    expect(readFileSync(join(out, 'kestrel-brook.results.csv'))).toEqual(readFileSync(join(fromFile, 'kestrel-brook-2026-11.results.csv')));
    expect(readdirSync(spool)).toEqual([]);
  });

  it('calls the outputs stdin without --name, and a stop names standard input', () => {
    const out = join(dir, 'default');
    expect(runCli(['recalc', '-', '-m', 'surface-water', '-o', out, '--outputs', 'csv'], { input: demo, env }).code).toBe(0);
    expect(readdirSync(out)).toEqual(['stdin.results.csv']);
    const bad = runCli(['recalc', '-', '-m', 'surface-water', '-o', join(dir, 'bad')], { input: 'a,b\n1,2\n', env });
    expect(bad.code).toBe(2);
    expect(bad.stderr).toBe('phasebook: standard input, row 1: missing the required column "sample_id" (or "Sample Name")\nNothing was written.\n');
    expect(readdirSync(spool)).toEqual([]);
  });

  it.each([
    [['--name', '../escape'], 'phasebook: expected a worklist name made of letters, digits, ".", "_" and "-" (the outputs take it), got "../escape"\nNothing was written.\n'],
    [['--max-bytes', '100'], 'phasebook: standard input: is larger than the 100 bytes accepted (--max-bytes)\nNothing was written.\n'],
  ])('refuses %j', (extra, message) => {
    const r = runCli(['recalc', '-', '-m', 'surface-water', '-o', join(dir, 'refused'), ...extra], { input: demo, env });
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(message);
  });
});
