import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readWorklist, sniffContent } from '../../src/read/worklist.js';
import { stopOf } from '../helpers/stop.js';

let dir: string;
let xlsxBytes: Buffer;
const csvText = 'sample_id,conc\nA,1.5\n';
// OLE2 compound file signature (legacy .xls): [MS-CFB] §2.2 header signature.
const OLE = Buffer.from([0xd0, 0xcf, 0x11, 0xe0, 0xa1, 0xb1, 0x1a, 0xe1, 0, 0, 0, 0]);

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'phasebook-worklist-'));
  const wb = new ExcelJS.Workbook();
  const ws = wb.addWorksheet('Runs');
  ws.addRow(['sample_id', 'conc']);
  ws.addRow(['A', 1.5]);
  await wb.xlsx.writeFile(join(dir, 'ref.xlsx'));
  xlsxBytes = await readFile(join(dir, 'ref.xlsx'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function put(name: string, content: string | Buffer): Promise<string> {
  const p = join(dir, name);
  await writeFile(p, content);
  return p;
}


describe('readWorklist picks the reader', () => {
  it.each([
    { name: 'w.csv', content: 'csv', kind: 'csv' },
    { name: 'w.CSV', content: 'csv', kind: 'csv' },
    { name: 'w.txt', content: 'csv', kind: 'csv' },
    { name: 'w.tsv', content: 'tsv', kind: 'csv' },
    { name: 'w.xlsx', content: 'xlsx', kind: 'xlsx' },
    { name: 'w.xlsm', content: 'xlsx', kind: 'xlsx' },
    { name: 'w.dat', content: 'xlsx', kind: 'xlsx' }, // unknown extension: sniffed as zip
    { name: 'w.dat', content: 'csv', kind: 'csv' }, // unknown extension: sniffed as text
    { name: 'worklist', content: 'csv', kind: 'csv' }, // no extension
  ] as const)('$name holding $content → $kind', async ({ name, content, kind }) => {
    const bytes = content === 'xlsx' ? xlsxBytes : content === 'tsv' ? csvText.replaceAll(',', '\t') : csvText;
    const p = await put(name, bytes);
    const t = await readWorklist(p);
    expect(t.format.kind).toBe(kind);
    expect(t.headers).toEqual(['sample_id', 'conc']);
    expect(t.columns).toEqual([['A'], [kind === 'xlsx' ? 1.5 : '1.5']]);
  });

  it('passes the sheet option to the XLSX reader', async () => {
    const p = await put('sheet.xlsx', xlsxBytes);
    await expect(readWorklist(p, { sheet: 'Runs' })).resolves.toMatchObject({ format: { sheet: 'Runs' } });
    await expect(readWorklist(p, { sheet: 'Nope' })).rejects.toThrow(/has no sheet named "Nope"; its sheets are "Runs"/);
  });

  it('passes the delimiter option to the CSV reader', async () => {
    const p = await put('delim.csv', 'a;b,c\n1;2,3\n');
    const t = await readWorklist(p, { delimiter: ';' });
    expect(t.headers).toEqual(['a', 'b,c']);
  });
});

describe('readWorklist catches a file that is not what its name says', () => {
  it.each([
    {
      name: 'book.csv',
      content: () => xlsxBytes,
      message: 'does not look like a CSV text file: it is named ".csv" but is a zip archive (if it is an XLSX workbook, name it .xlsx)',
    },
    {
      name: 'text.xlsx',
      content: () => csvText,
      message: 'is not a readable XLSX workbook: it is named ".xlsx" but is not a zip archive (if it is CSV text, name it .csv)',
    },
    {
      name: 'binary.csv',
      content: () => Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 0x0d]), // a PNG header
      message: 'does not look like a CSV text file: it holds binary data (a NUL byte at byte 9)',
      line: 3, // the PNG header holds two 0x0A bytes, so byte 9 falls on text line 3
    },
    {
      name: 'old.xls',
      content: () => OLE,
      message: 'is a legacy Excel .xls workbook, which is not read; expected .xlsx or CSV (save it as one of those)',
    },
    {
      name: 'old-renamed.dat',
      content: () => OLE,
      message: 'is a legacy Excel .xls workbook, which is not read; expected .xlsx or CSV (save it as one of those)',
    },
    { name: 'empty.xlsx', content: () => '', message: 'is empty, expected a header row and data rows' },
  ] as { name: string; content: () => string | Buffer; message: string; line?: number }[])('$name', async ({ name, content, message, line }) => {
    const p = await put(name, content());
    const err = await stopOf(readWorklist(p));
    expect(err.kind).toBe('input');
    expect(err.message).toBe(message);
    expect(err.location.line).toBe(line);
    // A place found in the text itself is a text line, printed as such.
    expect(err.describe()).toBe(`${p}${line === undefined ? '' : `, line ${line}`}: ${message}`);
  });

  it('a missing file', async () => {
    const p = join(dir, 'missing.xlsx');
    const err = await stopOf(readWorklist(p));
    expect(err.describe()).toBe(`${p}: cannot be read: no such file`);
  });
});

describe('sniffContent', () => {
  it.each([
    // Zip signatures: PKWARE APPNOTE.TXT §4.3.7 (local file header) and §4.3.16 (end of central directory).
    ['zip with entries', [0x50, 0x4b, 0x03, 0x04, 0x14, 0, 0, 0], 'zip'],
    ['empty zip', [0x50, 0x4b, 0x05, 0x06, 0, 0, 0, 0], 'zip'],
    ['OLE2 (legacy .xls)', [...OLE], 'ole'],
    ['text starting with PK', [0x50, 0x4b, 0x2c, 0x41, 0x0a], 'other'],
    ['too short', [0x50, 0x4b], 'other'],
  ] as const)('%s', (_name, bytes, want) => {
    expect(sniffContent(Buffer.from(bytes))).toBe(want);
  });
});
