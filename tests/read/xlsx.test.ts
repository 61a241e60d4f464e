import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { StopError } from '../../src/errors.js';
import { readXlsx } from '../../src/read/xlsx.js';
import { buildZip } from '../helpers/zip.mjs';

let dir: string;
let book: string;

/** Write a workbook with exceljs (the reference writer) and return its path. */
async function workbook(name: string, fill: (wb: ExcelJS.Workbook) => void): Promise<string> {
  const wb = new ExcelJS.Workbook();
  fill(wb);
  const p = join(dir, name);
  await wb.xlsx.writeFile(p);
  return p;
}

async function stopOf(p: Promise<unknown>): Promise<StopError> {
  try {
    await p;
  } catch (err) {
    expect(err).toBeInstanceOf(StopError);
    return err as StopError;
  }
  throw new Error('expected a StopError');
}

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'phasebook-xlsx-'));
  book = await workbook('book.xlsx', (wb) => {
    const ws = wb.addWorksheet('Worklist');
    ws.addRow(['sample_id', 'extract_conc', 'as_text', 'doubled', 'prepared', 'checked', 'ratio', 'note', 'link']);
    ws.addRow([
      '0012',
      12.5,
      '12.5',
      { formula: 'B2*2', result: 25 },
      new Date(Date.UTC(2024, 4, 6, 13, 30)),
      true,
      { formula: '1/0', result: { error: '#DIV/0!' } },
      { richText: [{ text: 'bold ' }, { font: { bold: true }, text: 'part' }] },
      { text: 'site map', hyperlink: 'https://example.org/' },
    ]);
    ws.addRow(['=1+1', -2.5, ' 7 ', { formula: 'B3*2', result: -5 }, new Date(Date.UTC(2024, 4, 6)), false, { error: '#N/A' }, '@SUM(A1)']);
    // Row 4 left empty on purpose; row 5 is data again.
    ws.getCell('A5').value = 'S5';
    ws.getCell('B5').value = 0.1;
    // Trailing rows that hold only empty text: skipped.
    ws.getCell('A8').value = '   ';
    ws.getCell('C9').value = '';

    const other = wb.addWorksheet('Second sheet');
    other.addRow(['x']);
    other.addRow([1]);
  });
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('readXlsx: values as the sheet holds them', () => {
  it('reads the first sheet with numbers, text, cached formula results, dates, booleans, errors, rich text, links', async () => {
    const t = await readXlsx(book);
    expect(t.source).toBe(book);
    expect(t.format).toEqual({ kind: 'xlsx', decimalComma: false, sheet: 'Worklist', sheets: ['Worklist', 'Second sheet'] });
    expect(t.headers).toEqual(['sample_id', 'extract_conc', 'as_text', 'doubled', 'prepared', 'checked', 'ratio', 'note', 'link']);
    // Real sheet rows: the empty row 4 and the blank trailing rows 8, 9 are skipped.
    expect(Array.from(t.rowNumbers)).toEqual([2, 3, 5]);
    expect(t.rowCount).toBe(3);
    const col = (h: string) => t.columns[t.headers.indexOf(h)];
    expect(col('sample_id')).toEqual(['0012', '=1+1', 'S5']); // text stays text: leading zeros, a leading "="
    expect(col('extract_conc')).toEqual([12.5, -2.5, 0.1]); // numbers stay numbers
    expect(col('as_text')).toEqual(['12.5', ' 7 ', null]); // a number stored as text stays the string, spaces kept
    expect(col('doubled')).toEqual([25, -5, null]); // a formula gives its cached result
    expect(col('prepared')).toEqual(['2024-05-06T13:30:00', '2024-05-06', null]); // ISO 8601, the sheet's wall clock
    expect(col('checked')).toEqual(['TRUE', 'FALSE', null]);
    expect(col('ratio')).toEqual(['#DIV/0!', '#N/A', null]); // an error result, and an error value
    expect(col('note')).toEqual(['bold part', '@SUM(A1)', null]);
    expect(col('link')).toEqual(['site map', null, null]);
    expect(t.rowProblems).toEqual([]);
  });

  it('reads a named sheet', async () => {
    const t = await readXlsx(book, { sheet: 'Second sheet' });
    expect(t.format.sheet).toBe('Second sheet');
    expect(t.headers).toEqual(['x']);
    expect(t.columns).toEqual([[1]]);
  });

  it('takes the first non-empty row as the header and keeps real row numbers', async () => {
    const p = await workbook('offset.xlsx', (wb) => {
      const ws = wb.addWorksheet('S');
      ws.getCell('A3').value = 'sample_id';
      ws.getCell('B3').value = 'conc';
      ws.getCell('A4').value = 'A';
      ws.getCell('B4').value = 1;
      ws.getCell('A6').value = 'B';
    });
    const t = await readXlsx(p);
    expect(t.headers).toEqual(['sample_id', 'conc']);
    expect(Array.from(t.rowNumbers)).toEqual([4, 6]);
    expect(t.columns).toEqual([['A', 'B'], [1, null]]);
  });

  it('puts a merged range’s value in its top-left cell only', async () => {
    const p = await workbook('merged.xlsx', (wb) => {
      const ws = wb.addWorksheet('S');
      ws.addRow(['batch', 'sample_id']);
      ws.addRow(['B1', 'A']);
      ws.addRow([null, 'B']);
      ws.mergeCells('A2:A3');
    });
    const t = await readXlsx(p);
    expect(t.columns).toEqual([['B1', null], ['A', 'B']]);
  });

  it('reports values beyond the last header column, and a formula with no saved result', async () => {
    const p = await workbook('problems.xlsx', (wb) => {
      const ws = wb.addWorksheet('S');
      ws.addRow(['sample_id', 'conc']);
      ws.addRow(['A', 1, null, 'stray']);
      ws.addRow(['B', { formula: 'B2*2' }]);
    });
    const t = await readXlsx(p);
    expect(t.columns).toEqual([['A', 'B'], [1, null]]);
    expect(t.rowProblems).toEqual([
      { row: 0, message: 'row 2: values beyond the last header column were dropped: "stray" in column D' },
      {
        row: 1,
        column: 'conc',
        message:
          'row 3, column "conc": the formula "=B2*2" has no saved result; expected a value (open and save the file in a spreadsheet program)',
      },
    ]);
  });
});

describe('readXlsx: whole-file stops', () => {
  it.each<{ name: string; make: () => Promise<string>; options?: { sheet?: string; maxUnpackedBytes?: number }; message: RegExp; column?: string }>([
    {
      name: 'a sheet name that does not exist lists the sheets',
      make: async () => book,
      options: { sheet: 'Results' },
      message: /^has no sheet named "Results"; its sheets are "Worklist", "Second sheet"$/,
    },
    {
      name: 'an empty sheet',
      make: () => workbook('empty.xlsx', (wb) => void wb.addWorksheet('Blank')),
      message: /^sheet "Blank" is empty, expected a header row and data rows$/,
    },
    {
      name: 'header only',
      make: () => workbook('header.xlsx', (wb) => void wb.addWorksheet('H').addRow(['a', 'b'])),
      message: /^sheet "H" has a header row but no data rows, expected at least one row of data below the header$/,
    },
    {
      name: 'a duplicated header',
      make: () =>
        workbook('dup.xlsx', (wb) => {
          const ws = wb.addWorksheet('D');
          ws.addRow(['sample_id', 'conc', 'conc ']);
          ws.addRow(['A', 1, 2]);
        }),
      message: /^sheet "D": the header "conc" appears twice \(columns B and C\); expected each header once$/,
      column: 'conc',
    },
    {
      name: 'a text file named .xlsx',
      make: async () => {
        const p = join(dir, 'text.xlsx');
        await writeFile(p, 'sample_id,conc\nA,1\n');
        return p;
      },
      message: /^is not a readable XLSX workbook: it is not a zip archive/,
    },
    {
      name: 'a truncated workbook',
      make: async () => {
        const p = join(dir, 'truncated.xlsx');
        const whole = await readFile(book);
        await writeFile(p, whole.subarray(0, Math.floor(whole.length / 2)));
        return p;
      },
      message: /^is not a readable XLSX workbook: the zip archive is damaged or cut short/,
    },
    {
      name: 'a zip that holds no workbook',
      make: async () => {
        const p = join(dir, 'notbook.xlsx');
        await writeFile(p, buildZip([{ name: 'hello.txt', data: Buffer.from('hi') }]));
        return p;
      },
      message: /^is not a readable XLSX workbook: it has no workbook part \(xl\/workbook.xml\); expected a workbook as a spreadsheet program saves it$/,
    },
    {
      name: 'a zip bomb (a sheet part stated at ~4 GiB)',
      make: async () => {
        const p = join(dir, 'bomb.xlsx');
        await writeFile(p, buildZip([{ name: 'xl/worksheets/sheet1.xml', data: Buffer.from('<x/>'), statedSize: 0xfffffff0 }]));
        return p;
      },
      message: /^was refused as a possible zip bomb/,
    },
    {
      name: 'a workbook larger than maxUnpackedBytes',
      make: async () => book,
      options: { maxUnpackedBytes: 1000 },
      message: /^was refused as a possible zip bomb: its entries would unpack to more than 1000 bytes \(--max-unpacked\); raise --max-unpacked if the workbook is genuine$/,
    },
  ])('$name', async ({ make, options, message, column }) => {
    const p = await make();
    const err = await stopOf(readXlsx(p, options));
    expect(err.kind).toBe('input');
    expect(err.message).toMatch(message);
    expect(err.location.file).toBe(p);
    expect(err.location.column).toBe(column);
    expect(err.describe()).toContain(p);
    expect(err.describe()).not.toMatch(/\n\s+at /); // a message, not a stack
  });
});
