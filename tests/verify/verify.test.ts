/**
 * `verifyWorkbook`: an untouched workbook has no differences; each kind of edit a
 * reviewer might make is found and named (sheet, cell, worklist row, sample id, the
 * two values); a file that is not a phasebook workbook stops.
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import ExcelJS from 'exceljs';
import { beforeAll, describe, expect, it } from 'vitest';
import { StopError } from '../../src/errors.js';
import { inHouseKey } from '../../src/qc/limits.js';
import { recalculateTable } from '../../src/pipeline.js';
import { normaliseFormula, sameValue } from '../../src/verify/sheet-diff.js';
import { formatDifference, type Difference } from '../../src/verify/difference.js';
import { parseRanges, verifyWorkbook } from '../../src/verify/verify.js';
import { writeWorkbook } from '../../src/write/workbook/index.js';
import { genericMethod, rawTable } from '../fixtures/qc/build.js';
import { ALL_CASES, RUN, SAMPLE_CASES, editCopy, plain, readBook, recalcCase, rowWith, tempDir, unzipParts, valueByKey, writeCase } from './workbook-fixtures.js';
import { buildZip } from '../helpers/zip.mjs';
import { planWorkbook } from '../../src/write/workbook/plan.js';
import { writePlannedWorkbook } from '../../src/write/workbook/write.js';

const kestrelCase = SAMPLE_CASES[0]!;
let dir: string;
let kestrel: string;

beforeAll(async () => {
  dir = tempDir('phasebook-verify-');
  kestrel = (await writeCase(kestrelCase, dir)).path;
});

const lines = (d: readonly Difference[]) => d.map(formatDifference);
let k = 0;
async function edited(edit: (wb: ExcelJS.Workbook) => void): Promise<string> {
  const path = join(dir, `edited-${k++}.xlsx`);
  await editCopy(kestrel, path, edit);
  return path;
}

describe('an untouched workbook', () => {
  it.each(ALL_CASES.map((c) => [c.name, c]))('%s: no differences and the digest matches', async (_name, c) => {
    const { path } = await writeCase(c, dir, { file: `untouched-${c.name}.xlsx` });
    const report = await verifyWorkbook(path);
    expect(lines(report.differences)).toEqual([]);
    expect(report.digestMatches).toBe(true);
  });

  it('saved again by a spreadsheet library, with the sign-off filled in, still has none', async () => {
    const path = await edited((wb) => {
      const ws = wb.getWorksheet('Provenance')!;
      ws.getCell(rowWith(ws, 'prepared by'), 2).value = 'A. Analyst';
      ws.getCell(rowWith(ws, 'reviewed on'), 2).value = '2026-11-21';
    });
    const report = await verifyWorkbook(path);
    expect(lines(report.differences)).toEqual([]);
    expect(report.digestMatches).toBe(true);
  });

  it('with values only (above the formula row limit) and few notes has none', async () => {
    const { path } = await writeCase(kestrelCase, dir, { file: 'values-only.xlsx', formulaRowLimit: 10, maxNotes: 3 });
    expect(lines((await verifyWorkbook(path)).differences)).toEqual([]);
  });
});

describe('each kind of edit is found and named', () => {
  it('a volume typed over: the value the formulas used, what follows from it, and the row check', async () => {
    // Row 7 is the sample "KB-03 Footbridge" (samples/kestrel-brook-2026-11.csv), 1000.0 mL.
    const path = await edited((wb) => {
      wb.getWorksheet('Results')!.getCell('L7').value = 900;
    });
    const report = await verifyWorkbook(path);
    const text = lines(report.differences);
    // The input cell first, with both values, then the row check, then what follows from it.
    expect(text[0]).toBe(
      'Results!L7, worklist row 7, sample "KB-03 Footbridge", column "Sample Vol (mL)": typed over after writing: the cell holds 900; ' +
        'when written, the formulas read it as 1000 mL (the saved result of Results!V7)',
    );
    expect(text[1]).toMatch(/^Results!AL7, worklist row 7, sample "KB-03 Footbridge", row check: stored "[0-9a-f]{16}", expected "[0-9a-f]{16}"$/);
    expect(text).toContain('Results!V7, worklist row 7, sample "KB-03 Footbridge", sample_volume (as used) [mL] from column L: =IF(L7="","",L7) gives 900, but the cell holds 1000');
    expect(text.some((l) => /^Results!AI7, worklist row 7, sample "KB-03 Footbridge", pre_extraction_conc \[ug\/L\]: =IF\(.* gives 0\.398\d*, but the cell holds 0\.3583/.test(l))).toBe(true);
    expect(text.some((l) => l.startsWith('Provenance!B'))).toBe(true);
    expect(report.digestMatches).toBe(false);
  });

  it('a result pasted as a value: the formula was replaced, even with the same number', async () => {
    const path = await edited((wb) => {
      const c = wb.getWorksheet('Results')!.getCell('AI7');
      c.value = c.result as number;
    });
    const report = await verifyWorkbook(path);
    // The cell, and the digest, which takes a formula cell as a formula (digest 3), not by its value.
    expect(report.differences).toHaveLength(2);
    expect(formatDifference(report.differences[1]!)).toMatch(/^Provenance!B\d+, integrity digest/);
    expect(formatDifference(report.differences[0]!)).toMatch(
      /^Results!AI7, worklist row 7, sample "KB-03 Footbridge", pre_extraction_conc \[ug\/L\]: the formula was replaced by a value: stored (0\.3583\d*), expected =IF\(OR\(U7="".* giving (0\.3583\d*)$/,
    );
    // The same number on both sides: only the formula is gone.
    const m = /stored (\S+), .* giving (\S+)$/.exec(formatDifference(report.differences[0]!))!;
    expect(m[1]).toBe(m[2]);
  });

  it('a formula edited', async () => {
    const path = await edited((wb) => {
      const c = wb.getWorksheet('Results')!.getCell('AI7');
      c.value = { formula: 'U7*2', result: c.result } as ExcelJS.CellFormulaValue;
    });
    const text = lines((await verifyWorkbook(path)).differences);
    expect(text).toHaveLength(1);
    expect(text[0]).toMatch(/^Results!AI7, worklist row 7, sample "KB-03 Footbridge", pre_extraction_conc \[ug\/L\]: the formula was changed: stored =U7\*2, expected =IF\(/);
  });

  it('a deleted row: the row is missing, and the rows and counts no longer match', async () => {
    // Row 10 is the matrix spike "KB-03 Footbridge MS" of 2,4-Dichlorophenol.
    const path = await edited((wb) => {
      wb.getWorksheet('Results')!.spliceRows(10, 1);
    });
    const report = await verifyWorkbook(path);
    const text = lines(report.differences);
    expect(text).toContain(
      'Results!A10, worklist row 10, sample "KB-03 Footbridge MS": the row is missing: it was written between worklist row 9 and worklist row 11 but is no longer in the sheet (deleted?)',
    );
    expect(text).toContain('Provenance!B10, rows out: stored 44, expected 43');
    expect(text).toContain('Provenance!B11, worklist rows: stored "2-45", expected "2-9, 11-45"');
    expect(report.digestMatches).toBe(false);
  });

  it('a changed limit in the Method sheet', async () => {
    let row = 0;
    const path = await edited((wb) => {
      const ws = wb.getWorksheet('Method')!;
      ws.eachRow((r, n) => {
        if (plain(r.getCell(1)) === 'method' && plain(r.getCell(2)) === 'lcs') row = n;
      });
      ws.getCell(row, 5).value = 120;
    });
    const report = await verifyWorkbook(path);
    expect(lines(report.differences)).toEqual([
      `Method!E${row}, recovery high %: stored 120, expected 130`,
      expect.stringMatching(/^Provenance!B\d+, integrity digest \(SHA-256\): stored "[0-9a-f]{64}", expected "[0-9a-f]{64}"$/),
    ]);
    expect(report.digestMatches).toBe(false);
  });

  it('a changed limit in the method text: the method no longer has its SHA-256, and the judgement follows', async () => {
    // templates/surface-water.yaml: "lcs:  { recovery: [70, 130], rpd_max: 20 }"; the LCS of
    // 2,4-Dichlorophenol recovers 105.4 %, above a new upper limit of 100.
    const path = await edited((wb) => {
      const ws = wb.getWorksheet('Method')!;
      ws.eachRow((r) => {
        const v = plain(r.getCell(2));
        if (typeof v === 'string' && v.startsWith('  lcs:  { recovery: [70, 130]')) r.getCell(2).value = v.replace('[70, 130]', '[70, 100]');
      });
    });
    const text = lines((await verifyWorkbook(path)).differences);
    expect(text.some((l) => /^Method!B\d+, SHA-256 of the method file: stored "695148ae/.test(l))).toBe(true);
    expect(text.some((l) => /^Provenance!B\d+, method SHA-256: stored "695148ae/.test(l))).toBe(true);
    expect(text).toContain('Results!D3, worklist row 3, sample "MB-2611-A-LCS", flags: stored (empty), expected "REC_HIGH"');
    expect(text).toContain('Results!E3, worklist row 3, sample "MB-2611-A-LCS", qc_status: stored "pass", expected "fail"');
  });

  it('a method text that no longer reads as a method is named, and nothing is recomputed', async () => {
    const path = await edited((wb) => {
      const ws = wb.getWorksheet('Method')!;
      ws.eachRow((r) => {
        if (plain(r.getCell(2)) === 'name: surface-water') r.getCell(2).value = 'name: [surface-water';
      });
    });
    const report = await verifyWorkbook(path);
    expect(report.digestMatches).toBeUndefined();
    expect(lines(report.differences)).toEqual([
      expect.stringMatching(/^Method!B\d+, Method file text: the method text no longer reads as a method: .*surface-water\.yaml, line \d+: cannot read the method as YAML/),
    ]);
  });

  it('an edit that a spreadsheet recalculated (no stale values left) is still found by the row check and the digest', async () => {
    // Raise a volume and put the consequences in, as a recalculating program would save them.
    const path = await edited((wb) => {
      const ws = wb.getWorksheet('Results')!;
      ws.getCell('L9').value = 1000.5;
    });
    const text = lines((await verifyWorkbook(path)).differences);
    expect(text.some((l) => l.startsWith('Results!AL9, worklist row 9, sample "KB-05 Ford", row check:'))).toBe(true);
  });
});

describe('not a phasebook workbook', () => {
  it('a workbook without the Provenance sheet stops', async () => {
    const path = join(dir, 'plain.xlsx');
    const wb = new ExcelJS.Workbook();
    wb.addWorksheet('Sheet1').addRow(['sample_id', 'extract_conc']);
    await wb.xlsx.writeFile(path);
    const err = await verifyWorkbook(path).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(StopError);
    expect((err as StopError).describe()).toBe(`${path}: is not a phasebook workbook: it has no "Provenance" sheet`);
  });

  it('a text file stops', async () => {
    const path = join(dir, 'notes.xlsx');
    writeFileSync(path, 'not a workbook\n');
    const err = await verifyWorkbook(path).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(StopError);
    expect((err as StopError).message).toMatch(/^is not a readable XLSX workbook: it is not a zip archive/);
  });

  it('a workbook whose Provenance sheet says something else stops', async () => {
    const path = await edited((wb) => {
      wb.getWorksheet('Provenance')!.getCell('B1').value = 'spreadsheet of another kind';
    });
    await expect(verifyWorkbook(path)).rejects.toThrow('is not a phasebook workbook: it was written in the format "spreadsheet of another kind"; this phasebook reads "phasebook-workbook 4"');
  });

  // Format 3 too: this release laid the sheets out anew (reported_result, QC levels on Trends, the uncertainty
  // tables), so a format-3 workbook is verified by the phasebook that wrote it, never by a second planner here.
  it('a workbook of an earlier layout is refused with the way to check it, never called changed', async () => {
    // Found: a workbook written by the previous release verified with 967 differences though untouched.
    const path = await edited((wb) => {
      wb.getWorksheet('Provenance')!.getCell('B1').value = 'phasebook-workbook 2';
    });
    await expect(verifyWorkbook(path)).rejects.toThrow(
      'was written in the format "phasebook-workbook 2" by an earlier phasebook, whose sheets this version lays out differently; ' +
        'this phasebook verifies "phasebook-workbook 4": verify it with the phasebook version its Provenance sheet names',
    );
  });

  it.each([
    ['a sheet that is not XML', 'xl/worksheets/sheet2.xml', '<worksheet><sheetData><row r="1"><c', /the part "xl\/worksheets\/sheet2\.xml" is not well-formed XML/],
    ['a shared string that does not exist', 'xl/worksheets/sheet2.xml', null, /refers to shared string "99999", which the workbook does not hold/],
    ['a cell named as no cell is', 'xl/worksheets/sheet7.xml', null, /a cell is named "A1B"; expected a reference such as "B3"/],
  ])('a phasebook workbook with %s stops with its reason, never a program error', async (_what, part, text, message) => {
    const parts = await unzipParts(kestrel);
    let xml = parts.get(part)!.toString('utf8');
    if (text !== null) xml = text;
    else if (part.endsWith('sheet2.xml')) xml = xml.replace('<c r="A2"', '<c r="A2" t="s"><v>99999</v></c><c r="A2x"').replace(/<c r="A2x"[^>]*>(?:<is>.*?<\/is>|<v>.*?<\/v>)?<\/c>/, '');
    else xml = xml.replace('<c r="A1"', '<c r="A1B"');
    parts.set(part, Buffer.from(xml, 'utf8'));
    const path = join(dir, `damaged-${k++}.xlsx`);
    writeFileSync(path, buildZip([...parts].map(([name, data]) => ({ name, data }))));
    const err = await verifyWorkbook(path).then(
      () => undefined,
      (e: unknown) => e,
    );
    expect(err).toBeInstanceOf(StopError);
    expect((err as StopError).describe()).toMatch(message);
  });

  it('a workbook of a later layout is refused as written by a later phasebook', async () => {
    const path = await edited((wb) => {
      wb.getWorksheet('Provenance')!.getCell('B1').value = 'phasebook-workbook 9';
    });
    await expect(verifyWorkbook(path)).rejects.toThrow('was written in the format "phasebook-workbook 9" by a later phasebook');
  });
});

describe('worklists with more to carry', () => {
  it('a CSV with a short row keeps its reading problem through verify', async () => {
    const csv = join(dir, 'short-row.csv');
    writeFileSync(csv, 'sample_id,sample_type,analyte,extract_conc,sample_volume,solvent_volume\nS1,sample,atrazine,5,100,10\nS2,sample,atrazine,5\n');
    const { path, result } = await writeCase({ name: 'short', worklist: csv, method: join(kestrelCase.method, '../generic-lle.yaml') }, dir);
    expect(result.rowFlags[1]).toBe('INPUT_ERROR');
    const report = await verifyWorkbook(path);
    expect(lines(report.differences)).toEqual([]);
  });

  it('in-house limits: the ones applied are recorded and judge again in verify', async () => {
    // The in-house control limits of REFERENCES.md §2 (20 LCS recoveries): 86.83–109.97 %;
    // an lcs at 112 % fails them (it would pass the fixed 70–130 %).
    const method = genericMethod({ replace: [['  outlier_test: grubbs', '  limits: in_house\n  outlier_test: grubbs']] });
    const inHouse = new Map([[inHouseKey('atrazine', 'lcs'), { low: 86.83, high: 109.97, n: 20 }]]);
    const result = recalculateTable(rawTable([{ sample_id: 'L1', sample_type: 'lcs', extract_conc: 11.2, spike_conc: 10 }]), {
      method,
      worklist: { path: 'm.csv', name: 'm.csv', bytes: 0, sha256: '' },
      inHouse,
    });
    expect(result.rowFlags[0]).toBe('REC_HIGH');
    const path = join(dir, 'in-house.xlsx');
    await writeWorkbook(path, result, { run: RUN });
    expect(lines((await verifyWorkbook(path)).differences)).toEqual([]);

    // Widen the recorded in-house limit: verify judges with it, so the flag no longer follows.
    const changed = join(dir, 'in-house-changed.xlsx');
    await editCopy(path, changed, (wb) => {
      const ws = wb.getWorksheet('Method')!;
      ws.getCell(rowWith(ws, 'In-house recovery limits applied (from the QC history)') + 2, 5).value = 130; // recovery high %
    });
    const report = await verifyWorkbook(changed);
    const text = lines(report.differences);
    expect(text).toContain('Results!D2, worklist row 2, sample "L1", flags: stored "REC_HIGH", expected (empty)');
    expect(report.digestMatches).toBe(false);
  });
});

describe('pieces', () => {
  it.each([
    ['2-45', 44],
    ['2-9, 11-45', 43],
    ['7', 1],
    ['', 0],
  ])('parseRanges(%j) gives %i rows', (text, n) => {
    expect(parseRanges(text)).toHaveLength(n);
  });

  it.each(['2-x', '9-2', '1,,3'])('parseRanges(%j) is unreadable', (text) => {
    expect(parseRanges(text)).toBeUndefined();
  });

  it.each([
    ['=IF(A2="","",A2*1.0000000000000002)', 'IF(A2="","",A2*1)'],
    ['IF(A2 = "", FALSE(), A2)', 'IF(A2="",FALSE,A2)'],
    ['_xlfn.IFERROR(B2,"a b")', 'IFERROR(B2,"a b")'],
    ['F2*999.9999999999999', 'F2*1000'],
    ['Method!$A$38:$B$45', 'METHOD!$A$38:$B$45'],
    // Sheet-name quoting and case do not change a formula's meaning.
    ["'Method'!$a$38+sum(b2:b3)", 'METHOD!$A$38+SUM(B2:B3)'],
    ["'QC data'!A1&\"a b\"", "'QC DATA'!A1&\"a b\""],
    ["'A1'!B2", "'A1'!B2"],
    ['IF(A2=TRUE(),0.11800000000000001,1E+3)', 'IF(A2=TRUE,0.118,1000)'],
  ])('normaliseFormula(%j) is %j', (f, want) => {
    expect(normaliseFormula(f)).toBe(want);
  });

  it.each([
    [1, 1 + 1e-12, true],
    [100, 100.0000002, false],
    [null, '', true],
    [0, null, false],
    ['pass', 'pass', true],
    ['12', 12, false],
  ] as const)('sameValue(%j, %j) is %s', (a, b, same) => {
    expect(sameValue(a, b)).toBe(same);
  });

  it('formats a difference as one line', () => {
    expect(
      formatDifference({
        sheet: 'Results',
        address: 'Q7',
        context: { worklistRow: 7, sampleId: 'KB-03 Footbridge' },
        label: 'sample_volume (as used) [mL]',
        message: 'stored 1000, expected 900',
      }),
    ).toBe('Results!Q7, worklist row 7, sample "KB-03 Footbridge", sample_volume (as used) [mL]: stored 1000, expected 900');
    expect(formatDifference({ sheet: 'Workbook', message: 'the sheets are Results, expected Summary' })).toBe('Workbook: the sheets are Results, expected Summary');
  });
});
