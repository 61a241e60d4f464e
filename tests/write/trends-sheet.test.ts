/**
 * The workbook's Trends sheet: the QC history's series with the same numbers as
 * `phasebook trends`, live formulas a spreadsheet program recalculates to them,
 * the points each series is made of, and verify's checks over them.
 */
import { rmSync } from 'node:fs';
import { join } from 'node:path';
import type ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildTrends, trendsJson, type TrendRow, type TrendSeries } from '../../src/history/trends.js';
import type { RecalcResult } from '../../src/pipeline.js';
import { verifyWorkbook } from '../../src/verify/verify.js';
import { writeWorkbook } from '../../src/write/workbook/index.js';
import type { CellValue, PlannedCell, SheetPlan } from '../../src/write/workbook/cells.js';
import {
  NO_HISTORY,
  POINTS_TITLE,
  SERIES_TITLE,
  TRENDS_SHEET,
  planTrendsSheet,
} from '../../src/write/workbook/trends-sheet.js';
import { REFERENCE_LCS, REPORT_RUN, reportScenario } from '../report/fixtures.js';
import { editCopy, readBook, rowWith, tempDir } from '../verify/workbook-fixtures.js';

let dir: string;
let current: RecalcResult;
let history: TrendSeries[];
let workbook: string;
const RUN = { ...REPORT_RUN, node: 'v20.test' };

beforeAll(async () => {
  dir = tempDir('phasebook-trends-sheet-');
  ({ current, history } = await reportScenario(dir));
  workbook = join(dir, 'current.xlsx');
  await writeWorkbook(workbook, current, { run: RUN, history: { file: join(dir, 'history.db'), series: history } });
}, 180_000);

afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Every row of a plan as cells. */
function rows(plan: SheetPlan): (PlannedCell | undefined)[][] {
  return Array.from({ length: plan.rowCount }, (_, i) => [...plan.row(i).cells]);
}

/** 1-based row whose column A holds `text`. */
function rowOf(all: (PlannedCell | undefined)[][], text: string): number {
  return all.findIndex((r) => r[0]?.value === text) + 1;
}

/** The series rows: between the series table's header and the blank row after it. */
function seriesRows(all: (PlannedCell | undefined)[][]): { row: number; cells: (PlannedCell | undefined)[] }[] {
  const header = rowOf(all, SERIES_TITLE) + 1;
  const out = [];
  for (let r = header + 1; all[r - 1]!.length > 0; r++) out.push({ row: r, cells: all[r - 1]! });
  return out;
}

const value = (c: PlannedCell | undefined): CellValue => c?.value ?? null;

describe('planTrendsSheet', () => {
  it('shows every series with the numbers of "phasebook trends --json"', () => {
    const all = rows(planTrendsSheet(current, { history: { file: '/labs/qc/history.db', series: history }, minPoints: 20 }).plan);
    expect(all[1]!.map(value)).toEqual(['QC history', 'history.db']);
    const json = trendsJson(history);
    const shown = seriesRows(all);
    expect(shown).toHaveLength(json.length);
    json.forEach((s, i) => {
      const c = shown[i]!.cells.map(value);
      const blank = (x: number | null) => x ?? '';
      expect(c.slice(0, 10), `${s.analyte} ${s.sample_type}`).toEqual([
        s.analyte,
        s.sample_type,
        s.qc_level ?? null,
        s.n,
        s.mean,
        blank(s.sd),
        blank(s.warning_low),
        blank(s.warning_high),
        blank(s.control_low),
        blank(s.control_high),
      ]);
      expect(c[10]).toBe(s.rules.length);
    });
  });

  it("points each series' formulas at exactly its own points in run order", () => {
    const all = rows(planTrendsSheet(current, { history: { file: 'history.db', series: history }, minPoints: 20 }).plan);
    const shown = seriesRows(all);
    history.forEach((s, i) => {
      const { row, cells } = shown[i]!;
      const m = /^COUNT\(L(\d+):L(\d+)\)$/.exec(cells[3]!.formula ?? '');
      expect(m, cells[3]!.formula).not.toBeNull();
      const [first, last] = [Number(m![1]), Number(m![2])];
      expect(last - first + 1).toBe(s.points.length);
      for (let r = first; r <= last; r++) {
        const p = all[r - 1]!;
        expect([value(p[0]), value(p[1]), value(p[2]), value(p[3]), value(p[11])]).toEqual([s.analyte, s.sampleType, s.level || null, r - first + 1, s.points[r - first]!.value]);
      }
      expect(cells[4]!.formula).toBe(`AVERAGE(L${first}:L${last})`);
      expect(cells[5]!.formula).toBe(`IF(D${row}>=2,STDEV(L${first}:L${last}),"")`);
      expect(cells[6]!.formula).toBe(`IF(D${row}>=$B$3,E${row}-2*F${row},"")`);
      expect(cells[9]!.formula).toBe(`IF(D${row}>=$B$3,E${row}+3*F${row},"")`);
    });
    expect(all[2]!.map(value).slice(0, 2)).toEqual(['points needed for limits', 20]);
  });

  it('marks the points that broke a rule and names the rules (README example: 1-2s at B21, 1-2s and 2-2s at B22)', () => {
    const all = rows(planTrendsSheet(current, { history: { file: 'history.db', series: history }, minPoints: 20 }).plan);
    const start = rowOf(all, POINTS_TITLE) + 2;
    const lcs = all.slice(start - 1).filter((r) => r[0]?.value === 'Atrazine' && r[1]?.value === 'lcs');
    expect(lcs).toHaveLength(22);
    const b21 = lcs.find((r) => r[8]?.value === 'B21')!;
    expect(b21[11]!.mark).toBe('inform');
    expect(b21[11]!.value as number).toBeCloseTo(112, 9);
    expect(b21[11]!.note).toContain('1-2s (warning): one point beyond mean ± 2s');
    expect(value(b21[13])).toBe('1-2s (warning)');
    expect(value(b21[12])).toBeNull();
    const b22 = lcs.find((r) => r[8]?.value === 'B22')!;
    expect(b22[11]!.mark).toBe('fail');
    expect(b22[11]!.value as number).toBeCloseTo(113, 9);
    expect(value(b22[13])).toBe('1-2s (warning), 2-2s');
    expect(value(b22[12])).toBe('yes');
    expect(lcs.filter((r) => r[11]?.mark !== undefined)).toHaveLength(2);
    const series = seriesRows(all).find((s) => s.cells[0]?.value === 'Atrazine' && s.cells[1]?.value === 'lcs')!;
    expect(series.cells[10]).toMatchObject({ value: 3, mark: 'fail' });
    expect(value(series.cells[11])).toBe('1-2s (warning) ×2, 2-2s ×1');
  });

  // REFERENCES.md §2, constructed numeric check: 20 LCS recoveries → mean 98.40, s (n − 1) 3.8580,
  // LCL 86.83, LWL 90.68, UWL 106.12, UCL 109.97 (US EPA SW-846 Method 8000 practice).
  it.each([
    [20, [98.4, 3.858, 90.68, 106.12, 86.83, 109.97]],
    [19, null],
  ])('with %i points the limits are those of REFERENCES.md §2, or empty below 20', (n, expected) => {
    const points: TrendRow[] = REFERENCE_LCS.slice(0, n).map((v, i) => ({
      runId: i + 1,
      runTime: `2026-01-${String(i + 1).padStart(2, '0')}T10:00:00.000Z`,
      worklistName: `run-${i + 1}.csv`,
      worklistSha256: `sha-${i + 1}`,
      batchId: `B${i + 1}`,
      sampleId: `B${i + 1}-LCS`,
      rowNumber: 3,
      analyte: 'Atrazine',
      sampleType: 'lcs',
      qcLevel: '',
      recoveryPct: v,
    }));
    const series = buildTrends(points);
    const all = rows(planTrendsSheet(current, { history: { file: 'h.db', series }, minPoints: 20 }).plan);
    const c = seriesRows(all)[0]!.cells.map(value);
    expect(c[3]).toBe(n);
    if (expected === null) {
      expect(c.slice(6, 10)).toEqual(['', '', '', '']);
      expect(c[11]).toBe('no limits yet: 19 of the points needed');
      return;
    }
    const [mean, sd, lwl, uwl, lcl, ucl] = expected;
    expect(c[4] as number).toBeCloseTo(mean!, 2);
    expect(c[5] as number).toBeCloseTo(sd!, 4);
    expect(c[6] as number).toBeCloseTo(lwl!, 2);
    expect(c[7] as number).toBeCloseTo(uwl!, 2);
    expect(c[8] as number).toBeCloseTo(lcl!, 2);
    expect(c[9] as number).toBeCloseTo(ucl!, 2);
  });

  it('says so when the run was given no history, or the history holds no recoveries', () => {
    const none = rows(planTrendsSheet(current, { minPoints: 20 }).plan);
    expect(none[1]!.map(value)).toEqual(['QC history', NO_HISTORY]);
    expect(none.at(-1)!.map(value)).toEqual(['No QC history: nothing to show.']);
    const empty = rows(planTrendsSheet(current, { history: { file: 'h.db', series: [] }, minPoints: 20 }).plan);
    expect(empty.at(-1)!.map(value)).toEqual(['The history holds no control recoveries yet.']);
  });
});

describe('the written Trends sheet', () => {
  it('sits between Flags and Method, and verify finds nothing to report', async () => {
    const wb = await readBook(workbook);
    expect(wb.worksheets.map((w) => w.name)).toEqual(['Summary', 'Results', 'QC', 'Flags', 'Trends', 'Method', 'Provenance']);
    const report = await verifyWorkbook(workbook);
    expect(report.differences).toEqual([]);
    expect(report.digestMatches).toBe(true);
  });

  it('verify names the statistics a changed point no longer gives, and the digest no longer matches', async () => {
    const edited = join(dir, 'point-edited.xlsx');
    let at = 0;
    await editCopy(workbook, edited, (wb) => {
      const ws = wb.getWorksheet(TRENDS_SHEET)!;
      at = rowWith(ws, POINTS_TITLE) + 2; // the first point
      ws.getCell(`L${at}`).value = 250;
    });
    const report = await verifyWorkbook(edited);
    expect(report.digestMatches).toBe(false);
    const trends = report.differences.filter((d) => d.sheet === TRENDS_SHEET);
    // The point's series (the first one) no longer has the mean the sheet shows.
    expect(trends.map((d) => d.address)).toContain('E10');
  });

  it('verify names a statistic changed by hand', async () => {
    const edited = join(dir, 'mean-edited.xlsx');
    await editCopy(workbook, edited, (wb) => {
      const ws = wb.getWorksheet(TRENDS_SHEET)!;
      const row = rowWith(ws, SERIES_TITLE) + 2;
      const c = ws.getCell(`E${row}`);
      c.value = { formula: 'AVERAGE(L1:L2)', result: 50 } as ExcelJS.CellFormulaValue;
    });
    const report = await verifyWorkbook(edited);
    const d = report.differences.filter((x) => x.sheet === TRENDS_SHEET);
    expect(d.length).toBeGreaterThan(0);
    expect(d[0]).toMatchObject({ address: 'E10' });
  });
});
