/**
 * The reviewer's workbook read back with exceljs: sheets and their order, the
 * Results layout (verbatim inputs, as-used values, live formulas with the engine's
 * values cached, the results CSV's columns), marks and notes, the Method,
 * Provenance, Summary, QC and Flags sheets, reproducibility, the values-only mode,
 * the note budget, and both row writers. LibreOffice recalculation is in
 * workbook-libreoffice.test.ts.
 */
import { createHash } from 'node:crypto';
import { readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { FLAG_CODES } from '../../src/issues.js';
import { recalculate, recalculateTable, type RecalcResult } from '../../src/pipeline.js';
import { COMPARISON_RULE } from '../../src/qc/compare.js';
import { verifyWorkbook } from '../../src/verify/verify.js';
import { outputColumns } from '../../src/write/output-columns.js';
import { writeWorkbook } from '../../src/write/workbook/index.js';
import { COLOURS } from '../../src/write/workbook/style.js';
import { planWorkbook } from '../../src/write/workbook/workbook-plan.js';
import { directRowWriterAvailable, writePlannedWorkbook } from '../../src/write/workbook/write.js';
import { CAUTIONS } from '../../src/write/workbook/provenance-sheet.js';
import { resultsLayout } from '../../src/write/workbook/results-sheet.js';
import { genericMethod, rawTable } from '../fixtures/qc/build.js';
import {
  FORM_CASES,
  ROOT,
  RUN,
  SAMPLE_CASES,
  plain,
  readBook,
  rowWith,
  tempDir,
  unzipParts,
  valueByKey,
  writeCase,
} from '../verify/workbook-fixtures.js';

const kestrelCase = SAMPLE_CASES[0]!;
const canonicalCase = FORM_CASES[0]!;
const sha256 = (path: string) => createHash('sha256').update(readFileSync(path)).digest('hex');
const fillOf = (c: ExcelJS.Cell) => (c.fill as ExcelJS.FillPattern | undefined)?.fgColor?.argb;
const noteText = (c: ExcelJS.Cell): string => {
  const n = c.note as unknown;
  if (n === undefined) return '';
  if (typeof n === 'string') return n;
  return ((n as { texts?: { text: string }[] }).texts ?? []).map((t) => t.text).join('');
};
const headerColumn = (ws: ExcelJS.Worksheet, header: string): number => {
  let col = 0;
  ws.getRow(1).eachCell((c, i) => {
    if (col === 0 && plain(c) === header) col = i;
  });
  if (col === 0) throw new Error(`no column "${header}"`);
  return col;
};

let dir: string;
let kestrel: { path: string; result: RecalcResult; wb: ExcelJS.Workbook };
let canonical: { path: string; result: RecalcResult; wb: ExcelJS.Workbook };

beforeAll(async () => {
  dir = tempDir();
  const k = await writeCase(kestrelCase, dir);
  kestrel = { ...k, wb: await readBook(k.path) };
  const c = await writeCase(canonicalCase, dir);
  canonical = { ...c, wb: await readBook(c.path) };
});
afterAll(() => {
  // temp folders are left to the OS
});

describe('sheets', () => {
  it('are Summary, Results, QC, Flags, Trends, Method, Provenance, in that order', () => {
    expect(kestrel.wb.worksheets.map((w) => w.name)).toEqual(['Summary', 'Results', 'QC', 'Flags', 'Trends', 'Method', 'Provenance']);
  });

  it('Results has its header frozen and filter buttons over every column', () => {
    const ws = kestrel.wb.getWorksheet('Results')!;
    expect(ws.views[0]).toMatchObject({ state: 'frozen', ySplit: 1 });
    const width = ws.getRow(1).cellCount;
    expect(ws.autoFilter).toBe(`A1:${ws.getColumn(width).letter}1`);
  });
});

describe('Results layout', () => {
  it('leads with what a reviewer reads first, then the worklist columns verbatim and in order, then the worklist row', () => {
    const ws = kestrel.wb.getWorksheet('Results')!;
    expect([1, 2, 3, 4, 5].map((c) => plain(ws.getCell(1, c)))).toEqual(['sample_id', 'analyte', 'reported_result [ug/L]', 'flags', 'qc_status']);
    const { result } = kestrel;
    for (let r = 0; r < result.rowsOut; r++) {
      const row = ws.getRow(r + 2);
      expect(plain(row.getCell(1)) ?? '', `A${r + 2}`).toBe(result.table.texts.get('sample_id')![r]);
      expect(plain(row.getCell(2)) ?? '', `B${r + 2}`).toBe(result.table.texts.get('analyte')![r]);
      expect(plain(row.getCell(3)) ?? '', `C${r + 2}`).toBe(result.qc.reported[r]);
      expect(plain(row.getCell(4)) ?? '', `D${r + 2}`).toBe(result.rowFlags[r]);
      expect(plain(row.getCell(5)) ?? '', `E${r + 2}`).toBe(result.qc.status[r]);
    }
    // Row 3 of samples/kestrel-brook-2026-11.csv (read by eye from the file): the LCS of 2,4-dichlorophenol.
    expect([plain(ws.getCell('A3')), plain(ws.getCell('B3'))]).toEqual(['MB-2611-A-LCS', '2,4-Dichlorophenol']);
    const headers = result.raw.headers;
    headers.forEach((h, i) => expect(plain(ws.getCell(1, i + 6))).toBe(h));
    expect(plain(ws.getCell(1, headers.length + 6))).toBe('worklist row');
    expect(plain(ws.getCell(2, headers.length + 6))).toBe(2);
  });

  it('groups the worklist columns and the as-used columns apart, so that each folds away (outline level 1), and keeps them open', () => {
    const ws = kestrel.wb.getWorksheet('Results')!;
    const layout = resultsLayout(kestrel.result);
    const levels = layout.columns.map((c) => ws.getColumn(c.column).outlineLevel);
    expect(levels).toEqual(layout.columns.map((c) => (c.kind === 'input' || c.kind === 'as-used' ? 1 : 0)));
    expect(levels.slice(0, 5)).toEqual([0, 0, 0, 0, 0]);
    expect(levels.filter((l) => l === 1).length).toBe(kestrel.result.raw.headers.length + layout.asUsed.size);
    // The worklist row, between the groups, keeps them two.
    expect(ws.getColumn(layout.worklistRow.column).outlineLevel).toBe(0);
    expect(layout.columns.every((c) => !ws.getColumn(c.column).hidden)).toBe(true);
  });

  it('carries every column of the results CSV under the same header: reported_result, flags and qc_status lead, the rest in the same relative order', () => {
    const ws = kestrel.wb.getWorksheet('Results')!;
    const columns = outputColumns(kestrel.result);
    const lead = (['reported_result', 'flags', 'qc_status'] as const).map((role) => columns.find((c) => c.role === role)!);
    expect(lead.map((c) => headerColumn(ws, c.header))).toEqual([3, 4, 5]);
    const positions = columns.filter((c) => !lead.includes(c)).map((c) => headerColumn(ws, c.header));
    expect(positions.length).toBe(columns.length - 3);
    expect([...positions].sort((a, b) => a - b)).toEqual(positions);
    expect(positions[0]).toBe(6);
    expect(positions).toContain(headerColumn(ws, 'pre_extraction_conc [ug/L]'));
  });

  it('puts an "as used" column, with the method unit, for every field the formulas read, between inputs and computed columns', () => {
    const ws = kestrel.wb.getWorksheet('Results')!;
    for (const h of ['sample_volume (as used) [mL]', 'extract_conc (as used) [ug/L]', 'spike_conc (as used) [ug/L]', 'sample_type (as used)', 'acid_base (as used)', 'surrogate (as used)']) {
      const col = headerColumn(ws, h);
      expect(col).toBeGreaterThan(headerColumn(ws, 'worklist row'));
      expect(col).toBeLessThan(headerColumn(ws, 'distribution_ratio'));
    }
  });

  it('keeps text as text (a leading zero, a leading "=") and numbers as numbers', () => {
    const ws = canonical.wb.getWorksheet('Results')!;
    expect(ws.getCell('F2').value).toBe('007');
    expect(ws.getCell('F4').value).toBe('=SUM(A1)');
    expect(ws.getCell('F4').type).toBe(ExcelJS.ValueType.String);
    expect(ws.getCell('K2').value).toBe(6);
    expect(ws.getCell('K13').value).toBe('ten'); // the bad cell, verbatim
  });

  it('gives every computed cell of a row without input errors a formula, its cached value the engine value', () => {
    const ws = kestrel.wb.getWorksheet('Results')!;
    const layout = resultsLayout(kestrel.result);
    let formulas = 0;
    for (const def of kestrel.result.method.formulas) {
      const col = layout.computed.get(def.name)!;
      const values = kestrel.result.computed.get(def.name)!;
      for (let r = 0; r < kestrel.result.rowsOut; r++) {
        const c = ws.getCell(r + 2, col.column);
        expect(c.type, `${col.letter}${r + 2}`).toBe(ExcelJS.ValueType.Formula);
        formulas++;
        const v = values[r]!;
        if (Number.isFinite(v)) expect(c.result).toBe(v);
        else expect(c.result ?? '').toBe('');
      }
    }
    expect(formulas).toBe(44 * 5);
  });

  it('as-used cells are formulas over the verbatim cell: unit factor, default from the Method sheet, lab code look-up', () => {
    const ws = kestrel.wb.getWorksheet('Results')!;
    // LCS row 3: "BS" is the lab's code for lcs (templates/surface-water.yaml).
    const type = ws.getCell(3, headerColumn(ws, 'sample_type (as used)'));
    expect(type.formula).toMatch(/^IF\(TRIM\(G3\)="","sample",VLOOKUP\(LOWER\(TRIM\(G3\)\),Method!\$A\$\d+:\$B\$\d+,2,FALSE\)\)$/);
    expect(type.result).toBe('lcs');
    const extractions = ws.getCell(3, headerColumn(ws, 'extractions (as used)'));
    expect(extractions.formula).toMatch(/^IF\(N3="",Method!\$I\$\d+,N3\)$/);
    // No worklist column for K: the analyte's partition coefficient on the Method sheet.
    const k = ws.getCell(3, headerColumn(ws, 'partition_coeff (as used)'));
    expect(k.formula).toMatch(/^Method!\$C\$\d+$/);
    expect(k.result).toBe(320);
  });

  it('writes the computed cells of a row with an input error as empty values, not formulas', () => {
    const ws = canonical.wb.getWorksheet('Results')!;
    const layout = resultsLayout(canonical.result);
    for (const col of layout.computed.values()) {
      const c = ws.getCell(13, col.column);
      expect(c.type, col.header).toBe(ExcelJS.ValueType.Null);
    }
  });

  it('gives numeric columns a display format and the percent columns one decimal', () => {
    const ws = kestrel.wb.getWorksheet('Results')!;
    expect(ws.getCell(3, headerColumn(ws, 'spike_recovery_pct')).numFmt).toBe('0.0');
    expect(ws.getCell(3, headerColumn(ws, 'pre_extraction_conc [ug/L]')).numFmt).toMatch(/^0\.0+$/);
    expect(ws.getColumn(1).width).toBeGreaterThanOrEqual(8);
  });
});

describe('marks', () => {
  it('a failing flag fills its cell light red, with the reason in a note', () => {
    const ws = canonical.wb.getWorksheet('Results')!;
    const c = ws.getCell(5, headerColumn(ws, 'spike_recovery_pct')); // LCS-1 at 9.5 %
    expect(fillOf(c)).toBe(COLOURS.fail);
    expect(noteText(c)).toContain('REC_LOW: row 5, column "spike_recovery_pct": recovery below its limit: expected 70–130 %, got "9.5 %"');
    const flags = ws.getCell(5, headerColumn(ws, 'flags'));
    expect(fillOf(flags)).toBe(COLOURS.fail);
    expect(noteText(flags)).toContain('REC_LOW');
    expect(fillOf(ws.getCell(5, headerColumn(ws, 'qc_status')))).toBe(COLOURS.fail);
  });

  it('an input error marks the bad cell itself', () => {
    const c = canonical.wb.getWorksheet('Results')!.getCell('K13');
    expect(fillOf(c)).toBe(COLOURS.fail);
    expect(noteText(c)).toContain('INPUT_ERROR: row 13, column "extract_conc": expected a number, got "ten"');
  });

  it('an informing flag is light amber (OVER_RANGE on the extract concentration)', () => {
    const ws = kestrel.wb.getWorksheet('Results')!;
    const over = kestrel.result.flags.find((f) => f.code === 'OVER_RANGE')!;
    const c = ws.getCell(over.row + 2, headerColumn(ws, 'Extract Result (ng/mL)'));
    expect(fillOf(c)).toBe(COLOURS.inform);
    expect(noteText(c)).toContain('OVER_RANGE');
  });

  it("an engine note is light blue (no partition coefficient: E taken as 100 %)", () => {
    const ws = canonical.wb.getWorksheet('Results')!;
    const c = ws.getCell(3, headerColumn(ws, 'extraction_efficiency_pct'));
    expect(fillOf(c)).toBe(COLOURS.note);
    expect(noteText(c)).toBe('no partition coefficient: extraction efficiency taken as 100 %');
  });
});

describe('Method sheet', () => {
  it('holds the method file text, one line per row', () => {
    const ws = kestrel.wb.getWorksheet('Method')!;
    const start = rowWith(ws, 'Method file text') + 2;
    const lines = readFileSync(kestrelCase.method, 'utf8').split('\n');
    lines.forEach((line, i) => {
      expect(plain(ws.getCell(start + i, 1))).toBe(i + 1);
      expect(plain(ws.getCell(start + i, 2)) ?? '').toBe(line);
    });
  });

  it('lists the limits per analyte and type, and every formula as written', () => {
    const ws = kestrel.wb.getWorksheet('Method')!;
    const rows: unknown[][] = [];
    ws.eachRow((row) => rows.push([1, 2, 3, 4, 5, 6].map((c) => plain(row.getCell(c)))));
    // templates/surface-water.yaml: lcs 70–130 %, RPD 20; Naphthalene ms 60–130 %.
    expect(rows).toContainEqual(['method', 'lcs', null, 70, 130, 20]);
    expect(rows).toContainEqual(['analyte Naphthalene', 'ms', null, 60, 130, null]);
    const exprs = rows.map((r) => r[2]);
    for (const f of kestrel.result.method.formulas) expect(exprs).toContain(f.expr);
    expect(valueByKey(ws, 'SHA-256 of the method file')).toBe(sha256(kestrelCase.method));
  });
});

describe('Provenance sheet', () => {
  it('records the files, versions, command, time, rows, flag counts, rules and the digest', () => {
    const ws = kestrel.wb.getWorksheet('Provenance')!;
    expect(plain(ws.getCell('A1'))).toBe('phasebook workbook');
    expect(valueByKey(ws, 'worklist file')).toBe('kestrel-brook-2026-11.csv');
    expect(valueByKey(ws, 'worklist size (bytes)')).toBe(statSync(kestrelCase.worklist).size);
    expect(valueByKey(ws, 'worklist SHA-256')).toBe(sha256(kestrelCase.worklist));
    expect(valueByKey(ws, 'method name')).toBe('surface-water');
    expect(valueByKey(ws, 'method SHA-256')).toBe(sha256(kestrelCase.method));
    const pkg = JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8')) as { version: string };
    expect(valueByKey(ws, 'phasebook version')).toBe(pkg.version);
    expect(valueByKey(ws, 'Node.js version')).toBe(RUN.node);
    expect(valueByKey(ws, 'command line')).toBe(RUN.command);
    expect(valueByKey(ws, 'time (ISO 8601, UTC)')).toBe('2026-11-20T16:00:00.000Z');
    expect(valueByKey(ws, 'rows in')).toBe(44);
    expect(valueByKey(ws, 'rows out')).toBe(44);
    for (const code of FLAG_CODES) {
      expect(valueByKey(ws, code), code).toBe(kestrel.result.flags.filter((f) => f.code === code).length);
    }
    expect(valueByKey(ws, 'comparison with limits')).toBe(COMPARISON_RULE);
    expect(String(valueByKey(ws, 'results CSV'))).toMatch(/^formula-escaped/);
    expect(String(valueByKey(ws, 'integrity digest (SHA-256)'))).toMatch(/^[0-9a-f]{64}$/);
  });

  it('has a blank sign-off block', () => {
    const ws = kestrel.wb.getWorksheet('Provenance')!;
    for (const key of ['prepared by', 'prepared on', 'reviewed by', 'reviewed on', 'comments']) {
      expect(rowWith(ws, key), key).toBeGreaterThan(0);
      expect(valueByKey(ws, key), key).toBeNull();
    }
  });

  it('carries the cautions of the README word for word', () => {
    const readme = readFileSync(join(ROOT, 'README.md'), 'utf8');
    const section = readme.slice(readme.indexOf('## Safety and professional use'), readme.indexOf('## Usage'));
    const words = section.replace(/\*\*/g, '').replace(/^- /gm, '').replace(/\s+/g, ' ');
    for (const text of CAUTIONS) expect(words).toContain(text);
    const ws = kestrel.wb.getWorksheet('Provenance')!;
    const cells: unknown[] = [];
    ws.eachRow((row) => cells.push(plain(row.getCell(2))));
    for (const text of CAUTIONS) expect(cells).toContain(text);
  });
});

describe('Summary, QC and Flags sheets', () => {
  it('Summary starts with the verdict and has a legend with the colours used', () => {
    const k = kestrel.wb.getWorksheet('Summary')!;
    expect(valueByKey(k, 'Batch verdict')).toBe('PASS');
    const c = canonical.wb.getWorksheet('Summary')!;
    expect(valueByKey(c, 'Batch verdict')).toBe('FAIL');
    expect(fillOf(c.getCell('B2'))).toBe(COLOURS.fail);
    const legend = rowWith(c, 'Legend') + 2;
    expect([0, 1, 2].map((i) => fillOf(c.getCell(legend + i, 1)))).toEqual([COLOURS.fail, COLOURS.inform, COLOURS.note]);
    const codes: unknown[] = [];
    c.eachRow((row) => codes.push(plain(row.getCell(1))));
    for (const code of FLAG_CODES) expect(codes).toContain(code);
  });

  it('QC lists every control row with the limits that judged it, its values live from Results', () => {
    const ws = kestrel.wb.getWorksheet('QC')!;
    const controls = kestrel.result.qc.status.map((s, r) => (s === '' ? -1 : r)).filter((r) => r >= 0);
    expect(controls.length).toBe(24);
    controls.forEach((r, i) => {
      const row = ws.getRow(3 + i);
      expect(plain(row.getCell(1))).toBe(kestrel.result.raw.rowNumbers[r]);
      const lim = kestrel.result.qc.limits[r]!;
      expect(plain(row.getCell(11))).toBe(lim.recovery?.[0] ?? null);
      expect(plain(row.getCell(12))).toBe(lim.recovery?.[1] ?? null);
      expect(plain(row.getCell(14))).toBe(lim.rpdMax ?? null);
      const rec = row.getCell(10);
      expect(rec.formula).toMatch(/^IF\(Results!\$?[A-Z]+\$?\d+="","",Results!/);
      const v = kestrel.result.computed.get('spike_recovery_pct')![r]!;
      expect(rec.result ?? '').toBe(Number.isFinite(v) ? v : '');
    });
  });

  it('Flags has one row per flag, naming the Results cell it marks', () => {
    const ws = canonical.wb.getWorksheet('Flags')!;
    const results = canonical.wb.getWorksheet('Results')!;
    canonical.result.flags.forEach((f, i) => {
      const row = ws.getRow(3 + i);
      expect(plain(row.getCell(1))).toBe(canonical.result.raw.rowNumbers[f.row]);
      expect(plain(row.getCell(5))).toBe(f.code);
      expect(plain(row.getCell(8))).toBe(f.message);
      const address = String(plain(row.getCell(2))).replace('Results!', '');
      expect(fillOf(results.getCell(address)), address).toBeDefined();
    });
  });
});

describe('reproducible', () => {
  it('the same worklist, method and time give identical parts', async () => {
    const a = await writeCase(kestrelCase, dir, { file: 'repro-a.xlsx' });
    const b = await writeCase(kestrelCase, dir, { file: 'repro-b.xlsx' });
    const pa = await unzipParts(a.path);
    const pb = await unzipParts(b.path);
    expect([...pa.keys()].sort()).toEqual([...pb.keys()].sort());
    for (const [name, bytes] of pa) expect(bytes.equals(pb.get(name)!), name).toBe(true);
  });

  it('another time changes only the parts that record it', async () => {
    const a = await writeCase(kestrelCase, dir, { file: 'time-a.xlsx' });
    const result = await recalculate(kestrelCase.worklist, { method: kestrelCase.method });
    const path = join(dir, 'time-b.xlsx');
    await writeWorkbook(path, result, { run: { ...RUN, timestamp: '2027-01-05T08:30:00.000Z' } });
    const pa = await unzipParts(a.path);
    const pb = await unzipParts(path);
    const changed = [...pa.keys()].filter((k) => !pa.get(k)!.equals(pb.get(k)!)).sort();
    // core.xml (created/modified), the Summary (run time) and Provenance sheets.
    expect(changed).toEqual(['docProps/core.xml', 'xl/worksheets/sheet1.xml', 'xl/worksheets/sheet7.xml']);
  });
});

describe('options', () => {
  it('above the formula row limit the Results sheet holds values only, and says so', async () => {
    const { path, result } = await writeCase(canonicalCase, dir, { file: 'values.xlsx', formulaRowLimit: 5 });
    const wb = await readBook(path);
    const ws = wb.getWorksheet('Results')!;
    let formulas = 0;
    ws.eachRow((row) => row.eachCell((c) => (formulas += c.type === ExcelJS.ValueType.Formula ? 1 : 0)));
    expect(formulas).toBe(0);
    const layout = resultsLayout(result);
    expect(ws.getCell(2, layout.computed.get('extraction_efficiency_pct')!.column).value).toBe(result.computed.get('extraction_efficiency_pct')![0]);
    expect(valueByKey(wb.getWorksheet('Provenance')!, 'Results formulas')).toBe('values only');
    expect(String(valueByKey(wb.getWorksheet('Summary')!, 'Results sheet'))).toBe('values only: 12 rows is above the formula row limit of 5');
  });

  it('writes at most maxNotes notes; marked cells beyond keep their fill', async () => {
    const { path } = await writeCase(canonicalCase, dir, { file: 'notes.xlsx', maxNotes: 2 });
    const wb = await readBook(path);
    let notes = 0;
    let fills = 0;
    wb.worksheets.forEach((ws) =>
      ws.eachRow((row) =>
        row.eachCell((c) => {
          if (c.note) notes++;
          if (fillOf(c) === COLOURS.fail) fills++;
        }),
      ),
    );
    expect(notes).toBe(2);
    expect(fills).toBeGreaterThan(2);
  });

  it('the direct row writer is the one taken: this exceljs has the members it needs', () => {
    // Without them writePlannedWorkbook falls back to exceljs's own row writer, and the comparison below would
    // compare exceljs with itself; an upgrade that removes them must fail here.
    expect(directRowWriterAvailable()).toBe(true);
  });

  it("the direct row writer and exceljs's own give the same cells, formulas, notes and fills", async () => {
    const result = await recalculate(canonicalCase.worklist, { method: canonicalCase.method });
    const plan = () => planWorkbook(result, { run: RUN });
    const a = join(dir, 'direct.xlsx');
    const b = join(dir, 'exceljs.xlsx');
    await writePlannedWorkbook(a, plan(), { run: RUN, rowWriter: 'direct' });
    await writePlannedWorkbook(b, plan(), { run: RUN, rowWriter: 'exceljs' });
    const [wa, wb] = [await readBook(a), await readBook(b)];
    let compared = 0;
    for (const ws of wa.worksheets) {
      const other = wb.getWorksheet(ws.name)!;
      expect(other.rowCount, ws.name).toBe(ws.rowCount);
      ws.eachRow((row, r) =>
        row.eachCell((c, col) => {
          const o = other.getCell(r, col);
          expect(plain(o), `${ws.name}!${c.address}`).toEqual(plain(c));
          expect(o.formula, `${ws.name}!${c.address}`).toEqual(c.formula);
          expect(noteText(o), `${ws.name}!${c.address}`).toBe(noteText(c));
          expect(fillOf(o), `${ws.name}!${c.address}`).toBe(fillOf(c));
          compared++;
        }),
      );
    }
    expect(compared).toBeGreaterThan(500);
  });
});

describe('cells a spreadsheet could not take as written', () => {
  it('text keeps its spaces, line breaks and _xHHHH_ look-alikes', async () => {
    const rows = [
      { sample_id: '  padded id  ', extract_conc: 1 },
      { sample_id: 'two\nlines', extract_conc: 2 },
      { sample_id: 'code_x0041_', extract_conc: 3 },
    ];
    const result = recalculateTable(rawTable(rows), {
      method: genericMethod(),
      worklist: { path: 'memory.csv', name: 'memory.csv', bytes: 0, sha256: '' },
    });
    const path = join(dir, 'text.xlsx');
    await writeWorkbook(path, result, { run: RUN });
    const ws = (await readBook(path)).getWorksheet('Results')!;
    // The worklist's first column is the sheet's sixth, after the five leading ones.
    expect([2, 3, 4].map((r) => plain(ws.getCell(r, 6)))).toEqual(['  padded id  ', 'two\nlines', 'code_x0041_']);
  });

  it('text longer than a cell holds (32,767 characters) is cut there, with a note; the workbook still verifies', async () => {
    const long = 'x'.repeat(40_000);
    const result = recalculateTable(rawTable([{ sample_id: long, extract_conc: 1 }]), {
      method: genericMethod(),
      worklist: { path: 'memory.csv', name: 'memory.csv', bytes: 0, sha256: '' },
    });
    const path = join(dir, 'long-text.xlsx');
    await writeWorkbook(path, result, { run: RUN });
    const c = (await readBook(path)).getWorksheet('Results')!.getCell('F2');
    expect(String(plain(c))).toBe('x'.repeat(32_767));
    expect(noteText(c)).toMatch(/^This cell of the worklist holds 40000 characters; a spreadsheet cell holds 32767/);
    expect((await verifyWorkbook(path)).differences).toEqual([]);
  });

  it('a formula with no spreadsheet form is written as its value, with a note saying so', async () => {
    // 24 distribution ratios summed translate to more than the 8,192 characters a spreadsheet formula may hold.
    const term = 'distribution_ratio(partition_coeff, ph, pka, acid_base)';
    const method = genericMethod({ append: `  - name: long_sum\n    expr: ${Array(24).fill(term).join(' + ')}` });
    const result = recalculateTable(rawTable([{ sample_id: 'S1', extract_conc: 1, partition_coeff: 2 }]), {
      method,
      worklist: { path: 'memory.csv', name: 'memory.csv', bytes: 0, sha256: '' },
    });
    const path = join(dir, 'long.xlsx');
    await writeWorkbook(path, result, { run: RUN });
    const ws = (await readBook(path)).getWorksheet('Results')!;
    const c = ws.getCell(2, headerColumn(ws, 'long_sum'));
    expect(c.type).toBe(ExcelJS.ValueType.Number);
    expect(c.value).toBe(48); // 24 × K (neutral analyte: D = K = 2)
    expect(noteText(c)).toMatch(/^No spreadsheet formula: the spreadsheet formula would be \d+ characters long, above the limit of 8192\. The engine's value is written\.$/);
    expect(fillOf(c)).toBe(COLOURS.note);
  });

  it('an XLSX worklist: a number stored as text stays text, and its as-used value is written with a note', async () => {
    const src = join(dir, 'worklist.xlsx');
    const wb = new ExcelJS.Workbook();
    const ws = wb.addWorksheet('Run 1');
    ws.addRow(['sample_id', 'sample_type', 'analyte', 'extract_conc', 'sample_volume', 'solvent_volume']);
    ws.addRow(['S1', 'sample', 'atrazine', 5, '100', 10]);
    ws.addRow(['S2', 'sample', 'atrazine', { formula: '2+3', result: 5 }, 100, 10]);
    await wb.xlsx.writeFile(src);
    const result = await recalculate(src, { method: genericMethod() });
    const path = join(dir, 'from-xlsx.xlsx');
    await writeWorkbook(path, result, { run: RUN });
    const out = (await readBook(path)).getWorksheet('Results')!;
    expect(out.getCell('J2').value).toBe('100');
    const used = out.getCell(2, headerColumn(out, 'sample_volume (as used) [mL]'));
    expect(used.value).toBe(100);
    expect(noteText(used)).toContain('The cell J2 (the worklist\'s column "sample_volume", as written) holds text ("100")');
    expect(out.getCell('I3').value).toBe(5); // a formula cell of the worklist: its value
  });
});
