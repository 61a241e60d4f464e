/**
 * The workbook's Trends sheet recalculated by LibreOffice: its live formulas give the engine's numbers
 * (the sheet's own tests are in tests/write/trends-sheet.test.ts).
 */
import { rmSync } from 'node:fs';
import { join } from 'node:path';
import type ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { trendsJson, type TrendSeries } from '../../src/history/trends.js';
import { writeWorkbook } from '../../src/write/workbook/index.js';
import { SERIES_HEADERS, SERIES_TITLE, TRENDS_SHEET } from '../../src/write/workbook/trends-sheet.js';
import { disposeLibreOfficeProfile, isLibreOfficeAvailable, recalcWithLibreOffice } from '../helpers/libreoffice.js';
import { skipWithout } from '../helpers/tools.js';
import { REPORT_RUN, reportScenario } from '../report/fixtures.js';
import { close, editCopy, plain, readBook, rowWith, tempDir } from '../verify/workbook-fixtures.js';

let dir: string;
let history: TrendSeries[];
let workbook: string;
const RUN = { ...REPORT_RUN, node: 'v20.test' };

beforeAll(async () => {
  dir = tempDir('phasebook-trends-sheet-lo-');
  const scenario = await reportScenario(dir);
  history = scenario.history;
  workbook = join(dir, 'current.xlsx');
  await writeWorkbook(workbook, scenario.current, { run: RUN, history: { file: join(dir, 'history.db'), series: history } });
}, 180_000);

afterAll(async () => {
  await disposeLibreOfficeProfile();
  rmSync(dir, { recursive: true, force: true });
});

describe('the written Trends sheet in LibreOffice', () => {
  it.skipIf(skipWithout('LibreOffice', isLibreOfficeAvailable()))(
    'LibreOffice recalculates the series table to the engine numbers from wrong cached values',
    async () => {
      const stale = join(dir, 'stale.xlsx');
      await editCopy(workbook, stale, (wb) => {
        wb.getWorksheet(TRENDS_SHEET)!.eachRow((row) =>
          row.eachCell((c) => {
            const v = c.value as { formula?: string } | null;
            if (v && typeof v === 'object' && v.formula) c.value = { formula: v.formula, result: -987654.321 } as ExcelJS.CellFormulaValue;
          }),
        );
      });
      const wb = await readBook(await recalcWithLibreOffice(stale));
      const ws = wb.getWorksheet(TRENDS_SHEET)!;
      const first = rowWith(ws, SERIES_TITLE) + 2;
      const json = trendsJson(history);
      json.forEach((s, i) => {
        const r = ws.getRow(first + i);
        const got = [4, 5, 6, 7, 8, 9, 10].map((c) => plain(r.getCell(c)));
        const want = [s.n, s.mean, s.sd, s.warning_low, s.warning_high, s.control_low, s.control_high];
        got.forEach((g, k) => {
          const w = want[k];
          if (w === null) expect(g === null || g === '', `${s.analyte} ${s.sample_type} ${SERIES_HEADERS[k + 3]}`).toBe(true);
          else expect(close(g as number, w), `${s.analyte} ${s.sample_type} ${SERIES_HEADERS[k + 3]}: ${g} vs ${w}`).toBe(true);
        });
      });
    },
    300_000,
  );
});
