import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readXlsx } from '../../src/read/xlsx.js';
import { buildZip } from '../helpers/zip.mjs';
import { handWrittenWorkbook, type HandWrittenWorkbookSpec } from '../helpers/xlsx-parts.mjs';
import { stopOf } from '../helpers/stop.js';

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

/** Write a hand-written workbook (tests/helpers/xlsx-parts.mjs) and return its path. */
async function handWritten(name: string, spec: HandWrittenWorkbookSpec): Promise<string> {
  const p = join(dir, name);
  await writeFile(p, handWrittenWorkbook(spec));
  return p;
}

/** A sheet whose header is A1 "id", B1 "value", then `rows` of `<row>` XML. */
const twoColumns = (rows: string) =>
  '<row r="1"><c r="A1" t="inlineStr"><is><t>id</t></is></c><c r="B1" t="inlineStr"><is><t>value</t></is></c></row>' + rows;
const dataRow = (r: number, value: string) => `<row r="${r}"><c r="A${r}" t="inlineStr"><is><t>S${r}</t></is></c>${value}</row>`;

describe('readXlsx: what other programs write (hand-written parts, ECMA-376 Part 1)', () => {
  it('reads inline strings, rich text without its phonetic runs, _xHHHH_ escapes, kept spaces, t="str", "b", "e", "d"', async () => {
    const p = await handWritten('kinds.xlsx', {
      sheets: [
        {
          name: 'R&amp;D <1>'.replace('&amp;', '&'),
          xml:
            '<row r="1"><c r="A1" t="inlineStr"><is><t>id</t></is></c><c r="B1" t="inlineStr"><is><t>note</t></is></c><c r="C1" t="inlineStr"><is><t>flag</t></is></c><c r="D1" t="inlineStr"><is><t>err</t></is></c><c r="E1" t="inlineStr"><is><t>when</t></is></c></row>' +
            '<row r="2"><c r="A2" t="inlineStr"><is><r><t>ab</t></r><r><rPr><b/></rPr><t xml:space="preserve"> c </t></r><rPh sb="0" eb="1"><t>PH</t></rPh></is></c>' +
            '<c r="B2" t="str"><f>CONCATENATE("x","_x000D_")</f><v>line_x000D_end</v></c><c r="C2" t="b"><v>1</v></c><c r="D2" t="e"><v>#N/A</v></c><c r="E2" t="d"><v>2024-05-06T13:30:00</v></c></row>' +
            '<row r="3"><c r="A3" t="inlineStr"><is><t>&lt;a &amp; b&gt;</t></is></c><c r="B3" t="str"><f>""</f><v></v></c><c r="C3" t="b"><v>0</v></c><c r="D3" t="e"><v>#DIV/0!</v></c><c r="E3" t="d"><v>2024-05-06</v></c></row>',
        },
      ],
    });
    const t = await readXlsx(p);
    expect(t.format.sheet).toBe('R&D <1>'); // the name as written (entities in workbook.xml decoded)
    expect(t.columns).toEqual([
      ['ab c ', '<a & b>'],
      ['line\rend', null],
      ['TRUE', 'FALSE'],
      ['#N/A', '#DIV/0!'],
      ['2024-05-06T13:30:00', '2024-05-06'],
    ]);
    expect(t.rowProblems).toEqual([]);
  });

  it('reads a prefixed namespace, absolute relationship targets, rows and cells without r (positional), shared strings with rich runs', async () => {
    const main = 'http://schemas.openxmlformats.org/spreadsheetml/2006/main';
    const p = await handWritten('prefixed.xlsx', {
      absoluteTargets: true,
      sharedStrings: ['id', 'conc', '<si><r><t>S</t></r><r><t>-1</t></r></si>', 'S-2'],
      sheets: [
        {
          name: 'Run',
          part:
            `<?xml version="1.0" encoding="UTF-8"?><x:worksheet xmlns:x="${main}"><x:sheetData>` +
            '<x:row><x:c t="s"><x:v>0</x:v></x:c><x:c t="s"><x:v>1</x:v></x:c></x:row>' +
            '<x:row><x:c t="s"><x:v>2</x:v></x:c><x:c><x:v>12.5</x:v></x:c></x:row>' +
            '<x:row r="5"><x:c t="s"><x:v>3</x:v></x:c><x:c r="B5"><x:v> -1.5E-3 </x:v></x:c></x:row>' +
            '</x:sheetData></x:worksheet>',
        },
      ],
    });
    const t = await readXlsx(p);
    expect(t.headers).toEqual(['id', 'conc']);
    expect(Array.from(t.rowNumbers)).toEqual([2, 5]);
    expect(t.columns).toEqual([['S-1', 'S-2'], [12.5, -0.0015]]);
  });

  it('gives shared formulas their cached values and names the first cell of one without', async () => {
    const p = await handWritten('shared-formula.xlsx', {
      sheets: [
        {
          name: 'S',
          xml: twoColumns(
            dataRow(2, '<c r="B2"><f t="shared" ref="B2:B4" si="0">ROW()*2</f><v>4</v></c>') +
              dataRow(3, '<c r="B3"><f t="shared" si="0"/><v>6</v></c>') +
              dataRow(4, '<c r="B4"><f t="shared" si="0"/></c>'),
          ),
        },
      ],
    });
    const t = await readXlsx(p);
    expect(t.columns[1]).toEqual([4, 6, null]);
    expect(t.rowProblems).toEqual([
      {
        row: 2,
        column: 'value',
        message: 'row 4, column "value": the formula shared from cell B2 has no saved result; expected a value (open and save the file in a spreadsheet program)',
      },
    ]);
  });

  it('reads numbers in date formats as dates (built-in ids and custom codes), in the 1900 and the 1904 system', async () => {
    // Serials checked with openpyxl 3.0.9's from_excel (tests/read/xlsx-workbook.test.ts).
    const styles =
      '<numFmts count="2"><numFmt numFmtId="164" formatCode="yyyy\-mm\-dd"/><numFmt numFmtId="165" formatCode="0.00&quot; d&quot;"/></numFmts>' +
      '<cellXfs count="5"><xf numFmtId="0"/><xf numFmtId="14"/><xf numFmtId="22"/><xf numFmtId="164"/><xf numFmtId="165"/></cellXfs>';
    const cells = (r: number) =>
      dataRow(r, `<c r="B${r}" s="1"><v>45418</v></c><c r="C${r}" s="2"><v>45418.5625</v></c><c r="D${r}" s="3"><v>45418</v></c><c r="E${r}" s="4"><v>45418</v></c><c r="F${r}"><v>45418</v></c>`);
    const header =
      '<row r="1">' + ['id', 'b', 'c', 'd', 'e', 'f'].map((h) => `<c t="inlineStr"><is><t>${h}</t></is></c>`).join('') + '</row>';
    const p1900 = await handWritten('dates-1900.xlsx', { styles, sheets: [{ name: 'S', xml: header + cells(2) }] });
    const t = await readXlsx(p1900);
    expect(t.columns.slice(1).map((c) => c[0])).toEqual(['2024-05-06', '2024-05-06T13:30:00', '2024-05-06', 45418, 45418]);
    // In the 1904 system serial 43956 is 2024-05-06 (45418 − 1462 days).
    const p1904 = await handWritten('dates-1904.xlsx', { styles, date1904: true, sheets: [{ name: 'S', xml: header + dataRow(2, '<c r="B2" s="1"><v>43956</v></c>') }] });
    expect((await readXlsx(p1904)).columns[1]).toEqual(['2024-05-06']);
  });

  it.each([
    ['states far more rows than it holds', 'A1:B1048576'],
    ['states fewer rows than it holds', 'A1:B2'],
    ['states a single cell', 'A1'],
    ['states nonsense', 'x'],
  ])('a sheet whose <dimension> %s is read as it is (the dimension only sizes the columns)', async (_why, ref) => {
    const main = 'http://schemas.openxmlformats.org/spreadsheetml/2006/main';
    const rows = twoColumns([2, 3, 4].map((r) => dataRow(r, `<c r="B${r}"><v>${r}</v></c>`)).join(''));
    const p = await handWritten(`dimension-${ref.replace(/\W/g, '')}.xlsx`, {
      sheets: [{ name: 'S', part: `<?xml version="1.0"?><worksheet xmlns="${main}"><dimension ref="${ref}"/><sheetData>${rows}</sheetData></worksheet>` }],
    });
    const t = await readXlsx(p);
    expect(t.columns).toEqual([['S2', 'S3', 'S4'], [2, 3, 4]]);
    for (const col of t.columns) expect(Object.keys(col)).toEqual(['0', '1', '2']); // no holes, no spare length
  });

  it('names every value beyond the header up to ten, and counts the rest', async () => {
    const extra = Array.from({ length: 12 }, (_, i) => `<c><v>${i + 1}</v></c>`).join('');
    const p = await handWritten('extra.xlsx', { sheets: [{ name: 'S', xml: twoColumns(`<row r="2"><c t="inlineStr"><is><t>A</t></is></c><c><v>1</v></c>${extra}</row>`) }] });
    const t = await readXlsx(p);
    expect(t.rowProblems.map((x) => x.message)).toEqual([
      'row 2: values beyond the last header column were dropped: "1" in column C, "2" in column D, "3" in column E, "4" in column F, "5" in column G, "6" in column H, "7" in column I, "8" in column J, "9" in column K, "10" in column L and 2 more',
    ]);
  });
});

describe('readXlsx: a cell is what it says, or its row is flagged with what it held', () => {
  const want = 'expected a finite number';
  it.each<{ name: string; cell: string; value: string | number | null; message: string }>([
    { name: 'a decimal comma in a number cell', cell: '<c r="B2"><v>12,5</v></c>', value: '12,5', message: `the cell B2 is stored as a number but holds "12,5"; ${want}` },
    { name: 'two decimal points', cell: '<c r="B2" t="n"><v>1.5.5</v></c>', value: '1.5.5', message: `the cell B2 is stored as a number but holds "1.5.5"; ${want}` },
    { name: 'a number followed by text', cell: '<c r="B2"><v>133.9abc</v></c>', value: '133.9abc', message: `the cell B2 is stored as a number but holds "133.9abc"; ${want}` },
    { name: 'hexadecimal', cell: '<c r="B2"><v>0x10</v></c>', value: '0x10', message: `the cell B2 is stored as a number but holds "0x10"; ${want}` },
    { name: 'NaN', cell: '<c r="B2"><v>NaN</v></c>', value: 'NaN', message: `the cell B2 is stored as a number but holds "NaN"; ${want}` },
    { name: 'Infinity', cell: '<c r="B2"><v>Infinity</v></c>', value: 'Infinity', message: `the cell B2 is stored as a number but holds "Infinity"; ${want}` },
    { name: 'past the double range', cell: '<c r="B2"><v>1e400</v></c>', value: '1e400', message: `the cell B2 is stored as a number but holds "1e400"; ${want}` },
    {
      name: 'a shared string without a shared-strings part',
      cell: '<c r="B2" t="s"><v>0</v></c>',
      value: null,
      message: 'the cell B2 refers to shared string "0", but the workbook has no shared strings; expected a workbook as a spreadsheet program saves it',
    },
    {
      name: 'an ISO date cell that is no date',
      cell: '<c r="B2" t="d"><v>2024-13-01</v></c>',
      value: '2024-13-01',
      message: 'the cell B2 is stored as a date but holds "2024-13-01"; expected an ISO 8601 date such as "2024-05-06"',
    },
    { name: 'a boolean that is neither', cell: '<c r="B2" t="b"><v>2</v></c>', value: '2', message: 'the cell B2 is stored as TRUE/FALSE but holds "2"; expected 0 or 1' },
    {
      name: 'an unknown cell type',
      cell: '<c r="B2" t="q"><v>7</v></c>',
      value: '7',
      message: 'the cell B2 has the type "q", which is not one of the spreadsheet cell types; expected n, s, str, inlineStr, b, e or d',
    },
  ])('$name', async ({ name, cell, value, message }) => {
    const p = await handWritten(`cell-${name.replace(/\W+/g, '-')}.xlsx`, { sheets: [{ name: 'S', xml: twoColumns(dataRow(2, cell) + dataRow(3, '<c r="B3"><v>2</v></c>')) }] });
    const t = await readXlsx(p);
    expect(Array.from(t.rowNumbers)).toEqual([2, 3]); // the row is kept, in its place
    expect(t.columns[1]).toEqual([value, 2]);
    expect(t.rowProblems).toEqual([{ row: 0, column: 'value', message: `row 2, column "value": ${message}` }]);
  });

  it('flags a shared string past the end of the shared strings, and a date serial that is no day', async () => {
    const p = await handWritten('sst-range.xlsx', {
      sharedStrings: ['only'],
      styles: '<cellXfs count="2"><xf numFmtId="0"/><xf numFmtId="14"/></cellXfs>',
      sheets: [{ name: 'S', xml: twoColumns(dataRow(2, '<c r="B2" t="s"><v>1</v></c>') + dataRow(3, '<c r="B3" s="1"><v>60</v></c>')) }],
    });
    const t = await readXlsx(p);
    expect(t.rowProblems.map((x) => x.message)).toEqual([
      'row 2, column "value": the cell B2 refers to shared string "1", but the workbook has 1; expected a workbook as a spreadsheet program saves it',
      // Serial 60 is the 1900-02-29 that does not exist (ECMA-376 Part 1, §18.17.4.1).
      'row 3, column "value": the cell B3 has a date format but holds 60, which is no day of the calendar; expected a date',
    ]);
  });
});

describe('readXlsx: rows and cells out of place stop the read with their place', () => {
  it.each<{ name: string; xml: string; message: string; line?: number }>([
    {
      name: 'a row written twice',
      xml: twoColumns(dataRow(2, '<c r="B2"><v>1</v></c>') + dataRow(2, '<c r="B2"><v>2</v></c>')),
      message: 'sheet "S": the sheet holds this row twice; expected each row once',
      line: 2,
    },
    {
      name: 'rows out of order',
      xml: twoColumns(dataRow(5, '') + dataRow(3, '')),
      message: 'sheet "S": the row comes after row 5; expected rows in order',
      line: 3,
    },
    {
      name: 'a row numbered 2,000,000,000',
      xml: twoColumns(dataRow(2, '') + '<row r="2000000000"><c r="A2000000000"><v>1</v></c></row>'),
      message: 'sheet "S": a row is numbered "2000000000"; expected row numbers from 1 to 1048576, the last row a sheet can have',
    },
    {
      name: 'a row numbered 1048577',
      xml: twoColumns('<row r="1048577"><c><v>1</v></c></row>'),
      message: 'sheet "S": a row is numbered "1048577"; expected row numbers from 1 to 1048576, the last row a sheet can have',
    },
    {
      name: 'a cell of another row',
      xml: twoColumns('<row r="2"><c r="A3"><v>1</v></c></row>'),
      message: 'sheet "S": the cell reference "A3" is not a cell of this row; expected a reference such as "B2"',
      line: 2,
    },
    {
      name: 'a cell written twice',
      xml: twoColumns('<row r="2"><c r="B2"><v>1</v></c><c r="B2"><v>2</v></c></row>'),
      message: 'sheet "S": the cell B2 comes twice or out of order (after B2); expected each cell once, in column order',
      line: 2,
    },
    {
      name: 'a cell past column XFD',
      xml: twoColumns('<row r="2"><c r="XFE2"><v>1</v></c></row>'),
      message: 'sheet "S": the cell "XFE2" lies past column XFD, the last a sheet can have',
      line: 2,
    },
  ])('$name', async ({ name, xml, message, line }) => {
    const p = await handWritten(`rows-${name.replace(/\W+/g, '-')}.xlsx`, { sheets: [{ name: 'S', xml }] });
    const err = await stopOf(readXlsx(p));
    expect(err.message).toBe(message);
    expect(err.location).toEqual(line === undefined ? { file: p } : { file: p, line });
  });
});

describe('readXlsx: limits and sheets', () => {
  it('refuses a table with more cells (rows × header columns) than --max-unpacked allows, naming it, at the row that passes', async () => {
    // A 200-column header over one-cell rows: 32 KiB allows 32768 / 16 = 2048 cells, 10 data rows of 200.
    const header = '<row r="1">' + Array.from({ length: 200 }, (_, i) => `<c t="inlineStr"><is><t>h${i}</t></is></c>`).join('') + '</row>';
    const p = await handWritten('cells.xlsx', { sheets: [{ name: 'S', xml: header + '<row><c><v>1</v></c></row>'.repeat(500) }] });
    const err = await stopOf(readXlsx(p, { maxUnpackedBytes: 32 * 1024 }));
    expect(err.message).toBe(
      'sheet "S": the sheet holds more cells (data rows × header columns) than --max-unpacked (32 KiB) allows, one per 16 bytes (2048); raise --max-unpacked to read it',
    );
    expect(err.location.line).toBe(12);
    expect((await readXlsx(p, { maxUnpackedBytes: 16 * 200 * 500 })).rowCount).toBe(500);
  });

  it('refuses shared strings past the same bound', async () => {
    // 20000 empty strings written as "<si/>" (5 bytes each, about 100 KB) against 128 KiB: 8192 strings allowed.
    const p = await handWritten('sst-bound.xlsx', { sharedStrings: Array.from({ length: 20_000 }, () => '<si/>'), sheets: [{ name: 'S', xml: twoColumns(dataRow(2, '')) }] });
    const err = await stopOf(readXlsx(p, { maxUnpackedBytes: 128 * 1024 }));
    expect(err.message).toBe('its shared strings hold more strings than --max-unpacked (128 KiB) allows, one per 16 bytes (8192); raise --max-unpacked to read it');
  });

  it('an empty first sheet of several: the message lists the sheets', async () => {
    const p = await handWritten('first-empty.xlsx', { sheets: [{ name: 'Notes', xml: '' }, { name: 'Worklist', xml: twoColumns(dataRow(2, '')) }] });
    const err = await stopOf(readXlsx(p));
    expect(err.message).toBe(
      'sheet "Notes" is empty, expected a header row and data rows; the workbook\'s sheets are "Notes", "Worklist" (choose one with --sheet)',
    );
    expect((await readXlsx(p, { sheet: 'Worklist' })).rowCount).toBe(1);
  });
});
