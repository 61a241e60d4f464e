/**
 * Test helpers for the reviewer's workbook and `verify`: the worklists the tests
 * run on (the demo worklists in samples/ and the input forms in tests/fixtures/forms),
 * writing a workbook, reading it back, unzipping it, and editing a copy the way a
 * reviewer might.
 */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import ExcelJS from 'exceljs';
import yauzl from 'yauzl';
import { recalculate, type RecalcResult } from '../../src/pipeline.js';
import { VERSION } from '../../src/version.js';
import { writeWorkbook, type RunInfo, type WorkbookOptions } from '../../src/write/workbook/index.js';

export const ROOT = resolve(import.meta.dirname, '../..');

export interface WorkbookCase {
  name: string;
  worklist: string;
  method: string;
}

const t = (name: string) => join(ROOT, 'templates', name);
export const SAMPLE_CASES: readonly WorkbookCase[] = [
  { name: 'kestrel', worklist: join(ROOT, 'samples/kestrel-brook-2026-11.csv'), method: t('surface-water.yaml') },
  { name: 'elderwick', worklist: join(ROOT, 'samples/elderwick-juice-s2611-3.csv'), method: t('fruit-juice.yaml') },
  { name: 'tarnmoor', worklist: join(ROOT, 'samples/tarnmoor-tmr204-run07.csv'), method: t('plasma-amitriptyline.yaml') },
];
export const FORM_CASES: readonly WorkbookCase[] = [
  { name: 'canonical', worklist: join(ROOT, 'tests/fixtures/forms/canonical.csv'), method: t('generic-lle.yaml') },
  { name: 'units-in-headers', worklist: join(ROOT, 'tests/fixtures/forms/units-in-headers.csv'), method: t('generic-lle.yaml') },
  { name: 'semicolon-decimal-comma', worklist: join(ROOT, 'tests/fixtures/forms/semicolon-decimal-comma.csv'), method: t('generic-lle.yaml') },
];
export const ALL_CASES: readonly WorkbookCase[] = [...SAMPLE_CASES, ...FORM_CASES];

export const RUN: RunInfo = {
  timestamp: '2026-11-20T16:00:00.000Z',
  command: 'phasebook recalc worklist.csv --method method.yaml --out out --timestamp 2026-11-20T16:00:00Z',
  version: VERSION,
  node: 'v20.test',
};

export function tempDir(prefix = 'phasebook-wb-'): string {
  return mkdtempSync(join(tmpdir(), prefix));
}

export async function recalcCase(c: WorkbookCase): Promise<RecalcResult> {
  return recalculate(c.worklist, { method: c.method });
}

/** Recalculate a case and write its workbook into `dir`; returns the path and the result. */
export async function writeCase(
  c: WorkbookCase,
  dir: string,
  options: Partial<WorkbookOptions> & { file?: string } = {},
): Promise<{ path: string; result: RecalcResult }> {
  const result = await recalcCase(c);
  const path = join(dir, options.file ?? `${c.name}.xlsx`);
  await writeWorkbook(path, result, { run: RUN, ...options });
  return { path, result };
}

export async function readBook(path: string): Promise<ExcelJS.Workbook> {
  const wb = new ExcelJS.Workbook();
  await wb.xlsx.readFile(path);
  return wb;
}

/** Every part of a zip (xlsx) by name, unpacked. */
export async function unzipParts(path: string): Promise<Map<string, Buffer>> {
  const zip = await yauzl.openPromise(path, { lazyEntries: true, autoClose: true });
  const parts = new Map<string, Buffer>();
  for await (const entry of zip.eachEntry()) {
    const stream = await zip.openReadStreamPromise(entry);
    const chunks: Buffer[] = [];
    for await (const chunk of stream) chunks.push(chunk as Buffer);
    parts.set(entry.fileName, Buffer.concat(chunks));
  }
  return parts;
}

/** Copy a workbook through exceljs with an edit, as a reviewer's spreadsheet program would save it. */
export async function editCopy(src: string, dst: string, edit: (wb: ExcelJS.Workbook) => void): Promise<void> {
  const wb = await readBook(src);
  edit(wb);
  await wb.xlsx.writeFile(dst);
}

/** A cell's value as plain text or number (rich text joined, a formula's cached result). */
export function plain(cell: ExcelJS.Cell): string | number | null {
  const v = cell.value as unknown;
  if (v === null || v === undefined) return null;
  if (typeof v === 'number' || typeof v === 'string') return v;
  if (typeof v === 'object' && v !== null) {
    const o = v as { richText?: { text: string }[]; formula?: string };
    if (o.richText) return o.richText.map((r) => r.text).join('');
    if (o.formula !== undefined) {
      const r = cell.result as unknown;
      return r === undefined || r === null ? null : typeof r === 'number' || typeof r === 'string' ? r : String(r);
    }
  }
  return String(v);
}

/** Find the row whose column A holds `key` and return column B. */
export function valueByKey(ws: ExcelJS.Worksheet, key: string): string | number | null | undefined {
  let found: string | number | null | undefined;
  ws.eachRow((row) => {
    if (found === undefined && plain(row.getCell(1)) === key) found = plain(row.getCell(2));
  });
  return found;
}

/** 1-based number of the row whose column A holds `text`, or 0. */
export function rowWith(ws: ExcelJS.Worksheet, text: string): number {
  let found = 0;
  ws.eachRow((row, r) => {
    if (found === 0 && plain(row.getCell(1)) === text) found = r;
  });
  return found;
}

/** Relative agreement to 1e-9 (1e-12 absolute near zero). */
export function close(a: number, b: number): boolean {
  return Math.abs(a - b) <= 1e-9 * Math.max(Math.abs(a), Math.abs(b)) + 1e-12;
}
