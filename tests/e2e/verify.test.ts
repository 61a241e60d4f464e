/**
 * `phasebook verify WORKBOOK` end to end, on the built CLI: exit 0 when untouched,
 * 1 with one line per difference, 2 when the file is not a phasebook workbook.
 */
import { copyFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';
import { editCopy } from '../verify/workbook-fixtures.js';

const WORKLIST = join(ROOT, 'samples/kestrel-brook-2026-11.csv');
const METHOD = join(ROOT, 'templates/surface-water.yaml');

let dir: string;
let workbook: string;

beforeAll(() => {
  dir = tempDir('phasebook-e2e-verify-');
  const r = runCli(['recalc', WORKLIST, '--method', METHOD, '--out', dir, '--outputs', 'xlsx', '--timestamp', '2026-11-20T16:00:00Z', '--quiet']);
  expect(r.code, r.stderr).toBe(0);
  workbook = join(dir, 'kestrel-brook-2026-11.xlsx');
});

describe('phasebook verify', () => {
  it('exits 0 on an untouched workbook and says so', () => {
    const r = runCli(['verify', workbook]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toBe('');
    expect(r.stderr).toBe(`phasebook verify: ${workbook}: untouched: 44 rows recomputed, every cell matches; the integrity digest matches\n`);
  });

  it('exits 1 with one line per difference: sheet, cell, worklist row, sample id, the two values', async () => {
    const copy = join(dir, 'typed-over.xlsx');
    await editCopy(workbook, copy, (wb) => {
      wb.getWorksheet('Results')!.getCell('L7').value = 900; // KB-03 Footbridge, was 1000.0 mL
    });
    const r = runCli(['verify', copy]);
    expect(r.code).toBe(1);
    const lines = r.stdout.trimEnd().split('\n');
    expect(lines[0]).toBe(
      'Results!L7, worklist row 7, sample "KB-03 Footbridge", column "Sample Vol (mL)": typed over after writing: the cell holds 900; ' +
        'when written, the formulas read it as 1000 mL (the saved result of Results!V7)',
    );
    expect(lines).toContain('Results!V7, worklist row 7, sample "KB-03 Footbridge", sample_volume (as used) [mL] from column L: =IF(L7="","",L7) gives 900, but the cell holds 1000');
    // exceljs, saving the edit, keeps no result for a formula whose result is empty text: those are recomputed, and said so.
    expect(r.stderr).toMatch(/^phasebook verify: .*: \d+ differences; the integrity digest does not match; \d+ formula cells had no saved result \(the program that saved the workbook dropped them\) and were recomputed\n$/);
    expect(r.stderr).toContain(`${copy}: ${lines.length} differences;`);
    const quiet = runCli(['verify', copy, '--quiet']);
    expect(quiet.code).toBe(1);
    expect(quiet.stderr).toBe('');
    expect(quiet.stdout).toBe(r.stdout);
  });

  it('--json: one document with every difference, the same lines, and the exit code unchanged', async () => {
    const copy = join(dir, 'typed-over-json.xlsx');
    await editCopy(workbook, copy, (wb) => {
      wb.getWorksheet('Results')!.getCell('L7').value = 900;
    });
    const plain = runCli(['verify', copy, '--quiet']);
    const r = runCli(['verify', copy, '--json']);
    expect(r.code).toBe(1);
    expect(r.stderr).toBe('');
    const doc = JSON.parse(r.stdout);
    expect(doc).toMatchObject({ exit_code: 1, workbook: copy, rows: 44, untouched: false, digest_matches: false });
    expect(doc.differences.map((d: { line: string }) => d.line)).toEqual(plain.stdout.trimEnd().split('\n'));
    expect(doc.differences).toContainEqual({
      sheet: 'Results',
      cell: 'V7',
      worklist_row: 7,
      sample_id: 'KB-03 Footbridge',
      label: 'sample_volume (as used) [mL] from column L',
      message: '=IF(L7="","",L7) gives 900, but the cell holds 1000',
      line: 'Results!V7, worklist row 7, sample "KB-03 Footbridge", sample_volume (as used) [mL] from column L: =IF(L7="","",L7) gives 900, but the cell holds 1000',
    });
    const untouched = JSON.parse(runCli(['verify', workbook, '--json']).stdout);
    expect(untouched).toMatchObject({ exit_code: 0, untouched: true, digest_matches: true, differences: [] });
  });

  it('exits 2 when the file is not a phasebook workbook', () => {
    const text = join(dir, 'notes.xlsx');
    writeFileSync(text, 'hello\n');
    const r = runCli(['verify', text]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/^phasebook: .*notes\.xlsx: is not a readable XLSX workbook: it is not a zip archive/);
    const missing = runCli(['verify', join(dir, 'nowhere.xlsx')]);
    expect(missing.code).toBe(2);
  });

  it('exits 2 on a workbook that phasebook did not write', () => {
    const other = join(dir, 'worklist-copy.xlsx');
    copyFileSync(join(ROOT, 'tests/fixtures/forms/canonical.csv'), join(dir, 'c.csv'));
    const r0 = runCli(['recalc', join(dir, 'c.csv'), '--method', join(ROOT, 'templates/generic-lle.yaml'), '--out', dir, '--outputs', 'csv', '--quiet']);
    expect(r0.code).toBe(1);
    // A results CSV renamed .xlsx is not a zip; an xlsx without a Provenance sheet is refused too (tests/verify).
    copyFileSync(join(dir, 'c.results.csv'), other);
    const r = runCli(['verify', other]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/is not a readable XLSX workbook/);
  });
});
