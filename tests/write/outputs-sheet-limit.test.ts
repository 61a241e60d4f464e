import { existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { RecalcResult } from '../../src/pipeline.js';
import { MAX_SHEET_ROWS, workbookDeclined, writeOutputs } from '../../src/outputs.js';
import { tempDir } from '../helpers/cli.js';

/**
 * Past the spreadsheet's size (issue 6): a sheet holds 1,048,576 rows
 * (Excel's specification and limits, "Worksheet size: 1,048,576 rows"; from
 * memory), the header included. A longer worklist gets no workbook, with a clear
 * message; the results CSV is still written.
 */
describe('a worklist longer than a sheet', () => {
  it.each([
    [10, false],
    [MAX_SHEET_ROWS - 1, false], // header + 1,048,575 rows fill the sheet exactly
    [MAX_SHEET_ROWS, true],
    [2_000_000, true],
  ])('%i rows: workbook declined = %s', (rows, declined) => {
    expect(workbookDeclined(rows) !== undefined).toBe(declined);
  });

  it('says why, with the numbers, and that the CSV holds every row', () => {
    expect(workbookDeclined(1_200_000)).toBe(
      'the workbook was not written: the worklist has 1,200,000 rows and a spreadsheet sheet holds 1,048,575 below its header; the results CSV holds every row',
    );
  });

  it('writeOutputs leaves the workbook out and writes nothing for it', async () => {
    const outDir = tempDir('phasebook-sheet-limit-');
    const result = {
      worklist: { path: join(outDir, 'huge.csv'), name: 'huge.csv', bytes: 0, sha256: '' },
      raw: { headers: [], columns: [] },
      method: { formulas: [], units: { concentration: 'ng/mL' } },
      computed: new Map(),
      rowFlags: [],
      qc: { status: [], reported: [] },
      rowsOut: MAX_SHEET_ROWS + 5,
    } as unknown as RecalcResult;
    const written = await writeOutputs(result, { outDir, outputs: ['xlsx'], run: { timestamp: '2026-12-01T00:00:00Z', command: 'test', version: '0' } });
    expect(written).toEqual({});
    expect(existsSync(join(outDir, 'huge.xlsx'))).toBe(false);
    expect(readdirSync(outDir)).toEqual([]);
  });
});
