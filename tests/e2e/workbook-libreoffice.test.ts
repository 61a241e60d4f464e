/**
 * A spreadsheet program that recalculates the workbook gets the engine's numbers.
 *
 * For the demo worklists (samples/) and the input forms (tests/fixtures/forms: canonical
 * headers, units in headers, semicolons with decimal commas), the workbook is written,
 * every formula's cached value is then replaced by a wrong one, and headless LibreOffice
 * recalculates and saves it. Every recalculated as-used and computed cell of the Results
 * sheet, and every live cell of the QC sheet, must equal the engine's value to a relative
 * 1e-9; so the numbers can only come from the formulas themselves.
 *
 * Also: the workbook as LibreOffice recalculates and saves it still passes `verify`, every case.
 *
 * Skipped only when LibreOffice is not installed; CI installs it (tests/helpers/libreoffice.ts).
 * LibreOffice converts all files in one run (it takes seconds to start).
 */
import { execFile } from 'node:child_process';
import { existsSync, mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { pathToFileURL } from 'node:url';
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RecalcResult } from '../../src/pipeline.js';
import { verifyWorkbook } from '../../src/verify/verify.js';
import { resultsLayout } from '../../src/write/workbook/results-sheet.js';
import { findSoffice, isLibreOfficeAvailable } from '../helpers/libreoffice.js';
import { ALL_CASES, FORM_CASES, close, editCopy, readBook, tempDir, writeCase, type WorkbookCase } from '../verify/workbook-fixtures.js';
import { skipWithout } from '../helpers/tools.js';

const STALE = -987654.321;

// LibreOffice recalculates an .xlsx on load only when told to (OOXMLRecalcMode 0 = always).
const RECALC_ALWAYS_XCU = `<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>0</value></prop></item>
</oor:items>
`;

/** Recalculate and save several files in one LibreOffice run; returns the converted paths. */
function recalcAll(paths: readonly string[], root: string): Promise<string[]> {
  const profile = join(root, 'lo-profile');
  mkdirSync(join(profile, 'user'), { recursive: true });
  writeFileSync(join(profile, 'user', 'registrymodifications.xcu'), RECALC_ALWAYS_XCU);
  const outDir = join(root, 'lo-out');
  const args = [`-env:UserInstallation=${pathToFileURL(profile).href}`, '--headless', '--norestore', '--nolockcheck', '--convert-to', 'xlsx', '--outdir', outDir, ...paths];
  return new Promise((resolve, reject) => {
    execFile(findSoffice()!, args, { timeout: 300_000 }, (err, stdout, stderr) => {
      if (err) return reject(new Error(`LibreOffice failed: ${err.message}\n${stdout}${stderr}`));
      const out = paths.map((p) => join(outDir, basename(p)));
      const missing = out.filter((p) => !existsSync(p));
      if (missing.length) return reject(new Error(`LibreOffice wrote no ${missing.join(', ')}\n${stdout}${stderr}`));
      resolve(out);
    });
  });
}

interface Prepared {
  c: WorkbookCase;
  result: RecalcResult;
  fresh: string;
  stale: string;
  recalculatedStale?: ExcelJS.Workbook;
  recalculatedFresh?: string;
}

const available = isLibreOfficeAvailable();

describe.skipIf(skipWithout('LibreOffice', available))('the workbook recalculated by LibreOffice', () => {
  const root = tempDir('phasebook-wb-lo-');
  const prepared: Prepared[] = [];

  beforeAll(async () => {
    for (const c of ALL_CASES) {
      const { path, result } = await writeCase(c, root, { file: `${c.name}.fresh.xlsx` });
      const stale = join(root, `${c.name}.stale.xlsx`);
      await editCopy(path, stale, (wb) => {
        wb.eachSheet((ws) =>
          ws.eachRow((row) =>
            row.eachCell((cell) => {
              if (cell.type === ExcelJS.ValueType.Formula) cell.value = { formula: cell.formula, result: STALE } as ExcelJS.CellFormulaValue;
            }),
          ),
        );
      });
      prepared.push({ c, result, fresh: path, stale });
    }
    const converted = await recalcAll(prepared.flatMap((p) => [p.stale, p.fresh]), root);
    for (let i = 0; i < prepared.length; i++) {
      prepared[i]!.recalculatedStale = await readBook(converted[2 * i]!);
      prepared[i]!.recalculatedFresh = converted[2 * i + 1]!;
    }
  }, 600_000);

  afterAll(() => rmSync(root, { recursive: true, force: true }));

  it.each(ALL_CASES.map((c) => [c.name]))('%s: every as-used and computed cell recalculates to the engine value', (name) => {
    const p = prepared.find((x) => x.c.name === name)!;
    const ws = p.recalculatedStale!.getWorksheet('Results')!;
    const layout = resultsLayout(p.result);
    let checked = 0;
    for (let r = 0; r < p.result.rowsOut; r++) {
      if (p.result.table.rowError[r]) continue; // plain values there
      for (const col of [...layout.asUsed.values(), ...layout.computed.values()]) {
        const cell = ws.getCell(r + 2, col.column);
        const got = cell.type === ExcelJS.ValueType.Formula ? cell.result : cell.value;
        const label = `${name} ${col.letter}${r + 2} ${col.header}`;
        const field = col.field;
        let want: number | string;
        if (col.kind === 'computed') want = p.result.computed.get(col.name!)![r]!;
        else if (field === 'sample_type') want = p.result.table.sampleType[r]!;
        else if (field === 'surrogate') want = p.result.table.analyteIndex[r]! >= 0 && p.result.method.analytes[p.result.table.analyteIndex[r]!]!.surrogate ? 1 : 0;
        else if (p.result.table.texts.has(field!)) want = p.result.table.texts.get(field!)![r]!;
        else want = p.result.table.numbers.get(field!)![r]!;
        if (typeof want === 'string') expect(got ?? '', label).toBe(want);
        else if (!Number.isFinite(want)) expect(got ?? '', label).toBe('');
        else {
          expect(typeof got, `${label}: got ${JSON.stringify(got)}`).toBe('number');
          expect(close(got as number, want), `${label}: got ${String(got)}, engine ${want}`).toBe(true);
        }
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(100);
  });

  it.each(ALL_CASES.map((c) => [c.name]))('%s: every live QC cell recalculates to the engine value', (name) => {
    const p = prepared.find((x) => x.c.name === name)!;
    const ws = p.recalculatedStale!.getWorksheet('QC')!;
    const columns: [number, string][] = [[8, 'spike_conc'], [9, 'pre_extraction_conc'], [10, 'spike_recovery_pct'], [13, 'rpd_pct']];
    let checked = 0;
    ws.eachRow((row, n) => {
      if (n < 3 || typeof row.getCell(2).value !== 'number') return;
      const r = (row.getCell(2).value as number) - 2;
      for (const [col, name2] of columns) {
        const cell = row.getCell(col);
        if (cell.type !== ExcelJS.ValueType.Formula) continue;
        const values = p.result.computed.get(name2) ?? p.result.table.numbers.get(name2)!;
        const want = values[r]!;
        const got = cell.result;
        if (!Number.isFinite(want)) expect(got ?? '', `${name} QC!${cell.address}`).toBe('');
        else expect(close(got as number, want), `${name} QC!${cell.address}: got ${String(got)}, engine ${want}`).toBe(true);
        checked++;
      }
    });
    expect(checked).toBeGreaterThan(0);
  });

  // Harvey, Analytical Chemistry 2.0 §7.7 weak-acid example (REFERENCES.md §1, E4): K_D 3.00,
  // Ka 1.00e-5 (pKa 5), 50.00 mL water and 50.00 mL hexane at pH 5.00: D = 1.500, 60.00 % extracted.
  // The forms' row "007" is that example (in mL, in L and µL, and with decimal commas); its
  // extract of 6 in a 50 mL final volume gives 6 × 50 / (50 × 0.600) = 10 (mass balance, REFERENCES.md §1).
  it.each(FORM_CASES.map((c) => [c.name]))('%s: row "007" recalculates to the textbook values', (name) => {
    const p = prepared.find((x) => x.c.name === name)!;
    const ws = p.recalculatedStale!.getWorksheet('Results')!;
    const layout = resultsLayout(p.result);
    const at = (n: string) => ws.getCell(2, layout.computed.get(n)!.column).result as number;
    expect(at('distribution_ratio')).toBeCloseTo(1.5, 12);
    expect(at('extraction_efficiency_pct')).toBeCloseTo(60, 10);
    expect(at('pre_extraction_conc')).toBeCloseTo(10, 10);
  });

  // units-in-headers holds inputs such as 0.11800000000000001 that LibreOffice saves to 15
  // digits (0.118): the row check and the digest take numbers to 15 digits (workbook format 4),
  // so that is no change.
  it.each(ALL_CASES.map((c) => [c.name]))(
    '%s: recalculated and saved by LibreOffice, the workbook still verifies',
    async (name) => {
      const p = prepared.find((x) => x.c.name === name)!;
      const report = await verifyWorkbook(p.recalculatedFresh!);
      expect(report.differences).toEqual([]);
      expect(report.digestMatches).toBe(true);
    },
  );
});
