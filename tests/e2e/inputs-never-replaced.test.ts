/**
 * An input is never replaced, with or without --force (issue 13, point 1), through the
 * built CLI: an XLSX worklist whose workbook output would take its own name, the same
 * file reached through a symbolic link, a hard link, and another spelling of the path.
 * Each case checks the exit code, the message, that the input's bytes did not change
 * and that nothing was written.
 */
import { createHash } from 'node:crypto';
import { linkSync, mkdirSync, readdirSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import ExcelJS from 'exceljs';
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';

const METHOD = join(ROOT, 'templates/surface-water.yaml');
const SAMPLE = join(ROOT, 'samples/kestrel-brook-2026-11.csv');
const TIMESTAMP = '2026-11-20T16:00:00Z';

let root: string;
let xlsxBytes: Buffer;

/** The demo worklist saved as an XLSX workbook, as an instrument export would be. */
async function demoAsXlsx(): Promise<Buffer> {
  const rows = Papa.parse<string[]>(readFileSync(SAMPLE, 'utf8'), { skipEmptyLines: 'greedy' }).data;
  const wb = new ExcelJS.Workbook();
  const ws = wb.addWorksheet('Export');
  for (const row of rows) ws.addRow(row.map((cell, i) => (i >= 5 && cell !== '' && Number.isFinite(Number(cell)) ? Number(cell) : cell)));
  return Buffer.from(await wb.xlsx.writeBuffer());
}

const sha256 = (path: string) => createHash('sha256').update(readFileSync(path)).digest('hex');

beforeAll(async () => {
  root = tempDir('phasebook-inputs-');
  xlsxBytes = await demoAsXlsx();
});
afterAll(() => rmSync(root, { recursive: true, force: true }));

let k = 0;
/** A fresh folder holding `run.xlsx`. */
function caseDir(): string {
  const dir = join(root, `case${k++}`);
  mkdirSync(dir);
  writeFileSync(join(dir, 'run.xlsx'), xlsxBytes);
  return dir;
}

function recalc(worklist: string, out: string, cwd: string, extra: string[] = []) {
  return runCli(['recalc', worklist, '--method', METHOD, '--out', out, '--timestamp', TIMESTAMP, '--quiet', ...extra], { cwd });
}

describe('an input is never an output', () => {
  it('refuses to write the workbook over an XLSX worklist in the same folder, with --force', () => {
    const dir = caseDir();
    const before = sha256(join(dir, 'run.xlsx'));
    const r = recalc('run.xlsx', '.', dir, ['--force']);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(
      'phasebook: run.xlsx: would replace the worklist "run.xlsx"; an input is never replaced, even with --force: ' +
        'choose another output folder with --out\nNothing was written.\n',
    );
    expect(sha256(join(dir, 'run.xlsx'))).toBe(before);
    expect(readdirSync(dir)).toEqual(['run.xlsx']);
  });

  it('refuses without --force too, naming the input rather than "already exists"', () => {
    const dir = caseDir();
    const r = recalc('run.xlsx', dir, dir);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`would replace the worklist "run.xlsx"`);
    expect(readdirSync(dir)).toEqual(['run.xlsx']);
  });

  it.each([
    ['a path through ".." and "."', (dir: string) => ({ worklist: './sub/../run.xlsx', out: `${dir}/./sub/..` })],
    ['an absolute path against a relative one', (dir: string) => ({ worklist: join(dir, 'run.xlsx'), out: '.' })],
    ['a doubled slash', (dir: string) => ({ worklist: 'run.xlsx', out: `${dir}//` })],
  ])('sees the same file through %s', (_name, spell) => {
    const dir = caseDir();
    mkdirSync(join(dir, 'sub'));
    const before = sha256(join(dir, 'run.xlsx'));
    const { worklist, out } = spell(dir);
    const r = recalc(worklist, out, dir, ['--force']);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('an input is never replaced, even with --force');
    expect(sha256(join(dir, 'run.xlsx'))).toBe(before);
    expect(readdirSync(dir).sort()).toEqual(['run.xlsx', 'sub']);
  });

  it.each([
    ['a symbolic link', (from: string, to: string) => symlinkSync(from, to)],
    ['a hard link', (from: string, to: string) => linkSync(from, to)],
  ])('refuses an output name that is %s to the worklist', (_name, makeLink) => {
    const dir = caseDir();
    mkdirSync(join(dir, 'out'));
    // out/run.xlsx is the worklist itself under another name.
    makeLink(join(dir, 'run.xlsx'), join(dir, 'out', 'run.xlsx'));
    const before = sha256(join(dir, 'run.xlsx'));
    const r = recalc('run.xlsx', 'out', dir, ['--force']);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(
      'phasebook: out/run.xlsx: would replace the worklist "run.xlsx" (the same file by another name or link); ' +
        'an input is never replaced, even with --force: choose another output folder with --out\nNothing was written.\n',
    );
    expect(sha256(join(dir, 'run.xlsx'))).toBe(before);
    expect(readdirSync(join(dir, 'out'))).toEqual(['run.xlsx']);
  });

  it('refuses to write over the method file', () => {
    const dir = caseDir();
    // A method kept under the name an output will take (odd, but it must survive).
    const method = join(dir, 'run.results.csv');
    writeFileSync(method, readFileSync(METHOD));
    const r = runCli(['recalc', 'run.xlsx', '--method', method, '--out', '.', '--force', '--outputs', 'csv', '--quiet'], { cwd: dir });
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`run.results.csv: would replace the method "${method}"`);
    expect(readFileSync(method)).toEqual(readFileSync(METHOD));
  });

  it('still replaces earlier outputs with --force, and then only them', () => {
    const dir = caseDir();
    mkdirSync(join(dir, 'out'));
    const first = recalc('run.xlsx', 'out', dir);
    expect([0, 1]).toContain(first.code);
    const again = recalc('run.xlsx', 'out', dir);
    expect(again.code).toBe(2);
    expect(again.stderr).toContain('already exist');
    const forced = recalc('run.xlsx', 'out', dir, ['--force']);
    expect(forced.code).toBe(first.code);
    expect(readdirSync(join(dir, 'out')).sort()).toEqual(['run.MB-2611-A.report.html', 'run.results.csv', 'run.xlsx']);
  });
});
