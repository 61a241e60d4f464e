/**
 * The XLSX reader on workbooks written by other programs: openpyxl (Python) and
 * LibreOffice (the openpyxl workbook opened, recalculated and saved again).
 * exceljs's own workbooks are read in tests/read/xlsx.test.ts.
 *
 * These tests need /usr/bin/python3 with openpyxl, and soffice. Without them
 * they are skipped on a workstation, but when the environment variable CI is
 * set they run and fail (CI installs both: .ci/run).
 */
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readXlsx } from '../../src/read/xlsx.js';
import { disposeLibreOfficeProfile, isLibreOfficeAvailable, recalcWithLibreOffice } from '../helpers/libreoffice.js';

const PYTHON = '/usr/bin/python3';
const inCi = process.env.CI !== undefined && process.env.CI !== '';
const haveOpenpyxl = spawnSync(PYTHON, ['-c', 'import openpyxl'], { stdio: 'ignore' }).status === 0;

/** An invented worklist with a cell note (the comment part that exceljs 4.4.0's reader fails on), dates, an empty row, two sheets. */
const SCRIPT = `
import sys, datetime
from openpyxl import Workbook
from openpyxl.comments import Comment
wb = Workbook()
ws = wb.active
ws.title = 'Worklist'
ws.append(['sample_id', 'extract_conc', 'as_text', 'prepared', 'checked', 'doubled', 'remark'])
ws.append(['0012', 12.5, '12.5', datetime.datetime(2024, 5, 6, 13, 30), True, '=B2*2', 'first'])
ws.append(['S-2', -2.5, ' 7 ', datetime.date(2024, 5, 6), False, None, None])
ws['A5'] = 'S-5'
ws['B5'] = 0.1
ws['A2'].comment = Comment('checked twice', 'analyst')
wb.create_sheet('Other').append(['x'])
wb.save(sys.argv[1])
`;

let dir: string;
let openpyxlBook: string;

function writeWithOpenpyxl(path: string): void {
  const r = spawnSync(PYTHON, ['-c', SCRIPT, path], { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`${PYTHON} with openpyxl could not write the workbook (status ${r.status}): ${r.error?.message ?? r.stderr}`);
}

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'phasebook-xlsx-programs-'));
  openpyxlBook = join(dir, 'openpyxl.xlsx');
});
afterAll(async () => {
  await disposeLibreOfficeProfile();
  await rm(dir, { recursive: true, force: true });
});

/** What both programs' workbooks hold, cell by cell (the values the script wrote). */
const expected = {
  headers: ['sample_id', 'extract_conc', 'as_text', 'prepared', 'checked', 'doubled', 'remark'],
  rowNumbers: [2, 3, 5], // row 4 is empty
  columns: {
    sample_id: ['0012', 'S-2', 'S-5'],
    extract_conc: [12.5, -2.5, 0.1],
    as_text: ['12.5', ' 7 ', null],
    prepared: ['2024-05-06T13:30:00', '2024-05-06', null],
    checked: ['TRUE', 'FALSE', null],
    remark: ['first', null, null],
  },
};

describe.skipIf(!haveOpenpyxl && !inCi)('a workbook written by openpyxl', () => {
  it('is read, cell note and all; its formula has no saved result (openpyxl writes none) and says so', async () => {
    writeWithOpenpyxl(openpyxlBook);
    const t = await readXlsx(openpyxlBook);
    expect(t.headers).toEqual(expected.headers);
    expect(Array.from(t.rowNumbers)).toEqual(expected.rowNumbers);
    for (const [h, values] of Object.entries(expected.columns)) expect(t.columns[t.headers.indexOf(h)], h).toEqual(values);
    expect(t.format).toEqual({ kind: 'xlsx', decimalComma: false, sheet: 'Worklist', sheets: ['Worklist', 'Other'] });
    expect(t.rowProblems).toEqual([
      {
        row: 0,
        column: 'doubled',
        message: 'row 2, column "doubled": the formula "=B2*2" has no saved result; expected a value (open and save the file in a spreadsheet program)',
      },
    ]);
  });

  it.skipIf(!isLibreOfficeAvailable() && !inCi)('and saved again by LibreOffice: the same cells, and the formula with its computed result', async () => {
    if (!existsSync(openpyxlBook)) writeWithOpenpyxl(openpyxlBook); // fails with its reason on CI without openpyxl
    const saved = await recalcWithLibreOffice(openpyxlBook);
    try {
      const t = await readXlsx(saved);
      expect(t.headers).toEqual(expected.headers);
      expect(Array.from(t.rowNumbers)).toEqual(expected.rowNumbers);
      for (const [h, values] of Object.entries(expected.columns)) expect(t.columns[t.headers.indexOf(h)], h).toEqual(values);
      expect(t.columns[t.headers.indexOf('doubled')]).toEqual([25, null, null]); // 12.5 × 2, computed by LibreOffice
      expect(t.rowProblems).toEqual([]);
    } finally {
      await rm(join(saved, '..'), { recursive: true, force: true });
    }
  }, 120_000);
});
