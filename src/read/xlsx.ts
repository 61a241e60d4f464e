/**
 * XLSX worklist reader: one sheet as written, column by column (RawTable).
 *
 * The zip guard runs first; then exceljs's in-memory reader (its 4.4.0 streaming
 * reader loses values, LIBRARY-NOTES.md §2). The header row is the first row
 * with any value; `rowNumbers` are the real sheet rows. Rows with no value in
 * any cell are skipped (trailing or in between), like blank CSV lines.
 *
 * Cell values: numbers stay numbers; text stays text ("0012" stays "0012");
 * a formula gives its cached result; rich text and hyperlinks give their plain
 * text; a date gives ISO 8601 text ("2024-05-06", or "2024-05-06T13:30:00"
 * when it has a time: the sheet's wall clock, no zone); booleans give
 * "TRUE"/"FALSE"; an error gives its text ("#DIV/0!"); empty gives null.
 * A merged range's value sits in its top-left cell only (as the spreadsheet's
 * own formulas see it); the other cells of the range are null.
 */
import ExcelJS from 'exceljs';
import { StopError } from '../errors.js';
import { rowMessage } from '../issues.js';
import { checkInputFile } from './csv.js';
import type { RawCell, RawTable, RowProblem } from './types.js';
import { checkZip } from './zip-guard.js';

export interface XlsxReadOptions {
  /** Sheet to read, by its exact name. Default: the first sheet. */
  sheet?: string;
  /** Refuse files larger than this, in bytes, before reading. Default 256 MiB. */
  maxBytes?: number;
  /** Refuse workbooks whose parts unpack to more than this, in bytes. Default 512 MiB. */
  maxUnpackedBytes?: number;
}

export async function readXlsx(path: string, options: XlsxReadOptions = {}): Promise<RawTable> {
  await checkInputFile(path, { maxBytes: options.maxBytes });
  await checkZip(path, { maxUnpackedBytes: options.maxUnpackedBytes });

  const wb = new ExcelJS.Workbook();
  try {
    await wb.xlsx.readFile(path);
  } catch (err) {
    throw new StopError('input', `is not a readable XLSX workbook: ${damageReason(err)}; expected a workbook as a spreadsheet program saves it`, { file: path });
  }
  const sheets = wb.worksheets;
  if (sheets.length === 0) {
    throw new StopError('input', 'is not a readable XLSX workbook: it has no worksheets', { file: path });
  }
  let ws: ExcelJS.Worksheet;
  if (options.sheet === undefined) {
    ws = sheets[0]!;
  } else {
    const found = sheets.find((s) => s.name === options.sheet);
    if (!found) {
      throw new StopError(
        'input',
        `has no sheet named "${options.sheet}"; its sheets are ${sheets.map((s) => `"${s.name}"`).join(', ')}`,
        { file: path },
      );
    }
    ws = found;
  }
  return sheetToTable(path, ws);
}

function sheetToTable(path: string, ws: ExcelJS.Worksheet): RawTable {
  const where = `sheet "${ws.name}"`;
  const problems: RowProblem[] = [];
  const lastRow = ws.rowCount;

  let headerRow = 0;
  let headers: string[] = [];
  for (let r = 1; r <= lastRow && headerRow === 0; r++) {
    const cells = rowCells(ws, r);
    if (cells === null || isBlank(cells)) continue;
    headerRow = r;
    let width = cells.length;
    while (width > 0 && isEmpty(cells[width - 1]!)) width--;
    headers = cells.slice(0, width).map((c) => (c.value === null ? '' : String(c.value)));
  }
  if (headerRow === 0) {
    throw new StopError('input', `${where} is empty, expected a header row and data rows`, { file: path });
  }

  const seen = new Map<string, number>();
  for (let c = 0; c < headers.length; c++) {
    const key = headers[c]!.trim();
    if (key === '') continue; // unnamed columns are left to column mapping
    if (seen.has(key)) {
      throw new StopError(
        'input',
        `${where}: the header "${key}" appears twice (columns ${columnLetters(seen.get(key)! + 1)} and ${columnLetters(c + 1)}); expected each header once`,
        { file: path, line: headerRow, column: key },
      );
    }
    seen.set(key, c);
  }

  const width = headers.length;
  const columns: RawCell[][] = headers.map(() => []);
  const rowNumbers: number[] = [];
  for (let r = headerRow + 1; r <= lastRow; r++) {
    const cells = rowCells(ws, r);
    if (cells === null || isBlank(cells)) continue;
    const dataRow = rowNumbers.length;
    rowNumbers.push(r);
    for (let c = 0; c < width; c++) {
      const cell = cells[c];
      columns[c]!.push(cell ? cell.value : null);
      if (cell?.formulaWithoutResult) {
        problems.push({
          row: dataRow,
          column: headers[c],
          message: rowMessage(
            r,
            headers[c],
            `the formula "=${cell.formulaWithoutResult}" has no saved result; expected a value (open and save the file in a spreadsheet program)`,
          ),
        });
      }
    }
    const extra: string[] = [];
    for (let c = width; c < cells.length; c++) {
      if (!isEmpty(cells[c]!)) extra.push(`"${String(cells[c]!.value)}" in column ${columnLetters(c + 1)}`);
    }
    if (extra.length > 0) {
      // Every extra value is named: the message is the only place they survive.
      const shown = extra.join(', ');
      problems.push({
        row: dataRow,
        message: rowMessage(r, undefined, `values beyond the last header column were dropped: ${shown}`),
      });
    }
  }
  if (rowNumbers.length === 0) {
    throw new StopError('input', `${where} has a header row but no data rows, expected at least one row of data below the header`, { file: path });
  }

  return {
    source: path,
    headers,
    headerRow,
    columns,
    rowCount: rowNumbers.length,
    rowNumbers: Int32Array.from(rowNumbers),
    rowProblems: problems,
    format: { kind: 'xlsx', decimalComma: false, sheet: ws.name },
  };
}

interface CellRead {
  value: RawCell;
  /** Formula text when the cell is a formula with no cached result. */
  formulaWithoutResult?: string;
}

/** Cells of sheet row `r` (index 0 = column A), or null when the row does not exist. */
function rowCells(ws: ExcelJS.Worksheet, r: number): CellRead[] | null {
  const row = ws.findRow(r);
  if (!row) return null;
  const out: CellRead[] = [];
  for (let c = 1; c <= row.cellCount; c++) {
    const cell = row.findCell(c);
    out.push(cell ? readCell(cell) : { value: null });
  }
  return out;
}

function readCell(cell: ExcelJS.Cell): CellRead {
  if (cell.type === ExcelJS.ValueType.Merge) return { value: null };
  const v = cell.value;
  if (v !== null && typeof v === 'object' && !(v instanceof Date)) {
    if ('formula' in v || 'sharedFormula' in v) {
      const result = (v as { result?: unknown }).result;
      if (result === undefined || result === null) {
        return { value: null, formulaWithoutResult: cell.formula || '' };
      }
      return { value: plainValue(result) };
    }
  }
  return { value: plainValue(v) };
}

/** Any exceljs value (or formula result) as a RawCell. */
function plainValue(v: unknown): RawCell {
  if (v === null || v === undefined) return null;
  if (typeof v === 'number') return Number.isFinite(v) ? v : null;
  if (typeof v === 'string') return v;
  if (typeof v === 'boolean') return v ? 'TRUE' : 'FALSE';
  if (v instanceof Date) return isoDate(v);
  if (typeof v === 'object') {
    const o = v as Record<string, unknown>;
    if (Array.isArray(o.richText)) return o.richText.map((run: { text?: unknown }) => String(run.text ?? '')).join('');
    if (typeof o.error === 'string') return o.error;
    if ('text' in o) return plainValue(o.text); // hyperlink: {text, hyperlink}; text may be rich text
    if ('result' in o) return plainValue(o.result);
  }
  return String(v);
}

/** exceljs gives a sheet's wall-clock date as that instant in UTC; write it back without a zone. */
function isoDate(d: Date): string {
  if (Number.isNaN(d.getTime())) return '';
  const iso = d.toISOString(); // YYYY-MM-DDTHH:MM:SS.sssZ
  if (iso.endsWith('T00:00:00.000Z')) return iso.slice(0, 10);
  return iso.endsWith('.000Z') ? iso.slice(0, 19) : iso.slice(0, 23);
}

function isEmpty(cell: CellRead): boolean {
  return cell.value === null || (typeof cell.value === 'string' && cell.value.trim() === '');
}

function isBlank(cells: CellRead[]): boolean {
  return cells.every((c) => isEmpty(c) && c.formulaWithoutResult === undefined);
}

/**
 * Words for an exceljs failure on a zip that passed the guard: a part that is not
 * well-formed XML, or a part missing or not as the format wants (exceljs then
 * fails on an undefined property). The library's own text follows in brackets.
 */
function damageReason(err: unknown): string {
  const text = (err instanceof Error ? err.message : String(err)).split('\n')[0]!.replace(/\.$/, '');
  if (err instanceof TypeError) return `a part of the workbook is damaged or missing (${text})`;
  if (/^\d+:\d+:/.test(text) || /xml|entity|tag|root node/i.test(text)) return `a part of the workbook is not well-formed XML (${text})`;
  return text;
}

/** 1 → "A", 27 → "AA". */
function columnLetters(n: number): string {
  let s = '';
  for (let k = n; k > 0; k = Math.floor((k - 1) / 26)) s = String.fromCharCode(65 + ((k - 1) % 26)) + s;
  return s;
}
