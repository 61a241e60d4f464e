/**
 * Reading a handed-over workbook for `phasebook verify`: every cell of every
 * sheet as a plain value (number, text or empty) and, for a formula cell, its
 * formula and cached result. exceljs's in-memory reader is used (LIBRARY-NOTES.md
 * §2: the streaming reader loses shared-formula text), after the zip guard.
 */
import ExcelJS from 'exceljs';
import { StopError } from '../errors.js';
import { checkZip } from '../read/zip-guard.js';
import type { CellValue } from '../write/workbook/cells.js';

export interface StoredCell {
  value: CellValue;
  /** Formula text without "=", when the cell holds one. */
  formula?: string;
}

export interface StoredSheet {
  name: string;
  /** Last row that holds anything (0 for an empty sheet). */
  lastRow: number;
  /** The cells of a 1-based row by 1-based column (empty cells left out). */
  row(row: number): ReadonlyMap<number, StoredCell>;
}

export interface StoredWorkbook {
  path: string;
  /** Sheet names in workbook order. */
  order: string[];
  sheet(name: string): StoredSheet | undefined;
}

/** A cell's value as text, number or empty; a formula cell gives its cached result. */
export function plainValue(v: unknown): CellValue {
  if (v === null || v === undefined) return null;
  if (typeof v === 'number') return Number.isFinite(v) ? v : String(v);
  if (typeof v === 'string') return v;
  if (typeof v === 'boolean') return v ? 'TRUE' : 'FALSE';
  if (v instanceof Date) return v.toISOString();
  if (typeof v === 'object') {
    const o = v as { richText?: { text: string }[]; text?: unknown; error?: string };
    if (Array.isArray(o.richText)) return o.richText.map((t) => t.text).join('');
    if (o.error !== undefined) return String(o.error);
    if (o.text !== undefined) return plainValue(o.text);
  }
  return String(v);
}

function storedCell(c: ExcelJS.Cell): StoredCell | undefined {
  if (c.type === ExcelJS.ValueType.Formula) {
    const formula = c.formula ?? '';
    return { value: plainValue(c.result), formula };
  }
  const value = plainValue(c.value);
  return value === null || value === '' ? undefined : { value };
}

export async function readStoredWorkbook(path: string, options: { maxUnpackedBytes?: number } = {}): Promise<StoredWorkbook> {
  await checkZip(path, { maxUnpackedBytes: options.maxUnpackedBytes });
  const wb = new ExcelJS.Workbook();
  try {
    await wb.xlsx.readFile(path);
  } catch (err) {
    throw new StopError('input', `is not a readable XLSX workbook: ${(err as Error).message}`, { file: path });
  }
  const sheets = new Map<string, StoredSheet>();
  for (const ws of wb.worksheets) {
    const rows = new Map<number, Map<number, StoredCell>>();
    let lastRow = 0;
    ws.eachRow({ includeEmpty: false }, (row, r) => {
      const cells = new Map<number, StoredCell>();
      row.eachCell({ includeEmpty: false }, (c, col) => {
        const s = storedCell(c);
        if (s) cells.set(col, s);
      });
      if (cells.size > 0) {
        rows.set(r, cells);
        lastRow = Math.max(lastRow, r);
      }
    });
    const empty = new Map<number, StoredCell>();
    sheets.set(ws.name, { name: ws.name, lastRow, row: (r) => rows.get(r) ?? empty });
  }
  return { path, order: wb.worksheets.map((w) => w.name), sheet: (name) => sheets.get(name) };
}
