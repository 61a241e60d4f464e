/**
 * Reading a handed-over workbook for `phasebook verify` and `phasebook sign`:
 * every cell of every sheet as a plain value (number, text or empty) and, for a
 * formula cell, its formula (a shared one as it reads in that cell) and cached
 * result, or that the saving program kept none (openpyxl keeps none).
 *
 * The same streaming XLSX package reader the worklists use (read/xlsx-package.ts
 * on yauzl and saxes, after the zip guard), so a workbook saved by Excel,
 * LibreOffice, openpyxl or exceljs reads alike, and a damaged one is a StopError
 * with its reason, never a JavaScript error. Styles, widths and number formats
 * are not read: they are not content.
 */
import { StopError } from '../errors.js';
import { XlsxPackage } from '../read/xlsx-package.js';
import { decodeEscapes, isoCellText, readDateStyles, readSharedStrings, readWorkbookInfo, serialToIso, type SharedStrings } from '../read/xlsx-workbook.js';
import { checkZip } from '../read/zip-guard.js';
import type { CellValue } from '../write/workbook/cells.js';
import { columnNumber, shiftFormula } from './shared-formula.js';
import { SheetCellEvents } from '../read/xlsx-sheet-events.js';

export interface StoredCell {
  /** The value; for a formula cell its cached result (null when none was saved). */
  value: CellValue;
  /** Formula text without "=", when the cell holds one. */
  formula?: string;
  /** A formula cell whose saving program kept no result: its value is recomputed, not read. */
  noCachedValue?: boolean;
  /** A number the cell's style shows as a date (a typed "2026-11-21"): the date as ISO 8601 text. */
  date?: string;
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

const MiB = 1024 * 1024;
/** Most shared strings read (the zip guard bounds the bytes; this bounds the count). */
const MAX_STRINGS = 64 * MiB;

export async function readStoredWorkbook(path: string, options: { maxUnpackedBytes?: number } = {}): Promise<StoredWorkbook> {
  await checkZip(path, { maxUnpackedBytes: options.maxUnpackedBytes, verifyData: false });
  const pkg = await XlsxPackage.open(path);
  try {
    const info = await readWorkbookInfo(pkg);
    const strings =
      info.sharedStringsPart === undefined
        ? undefined
        : await readSharedStrings(pkg, info.sharedStringsPart, {
            maxStrings: MAX_STRINGS,
            tooMany: (max) => new StopError('input', `is not a readable XLSX workbook: it holds more than ${max} shared strings`, { file: path }),
          });
    const dates = { styles: await readDateStyles(pkg, info.stylesPart), date1904: info.date1904 };
    const sheets = new Map<string, StoredSheet>();
    for (const ref of info.sheets) {
      const rows = new Map<number, Map<number, StoredCell>>();
      if (ref.part !== undefined && pkg.has(ref.part)) {
        const reader = new CellsReader(ref.name, { strings, dates }, (text) => pkg.damaged(`sheet "${ref.name}": ${text}`));
        await pkg.parse(ref.part, reader);
        for (const [r, cells] of reader.rows) rows.set(r, cells);
      }
      let lastRow = 0;
      for (const r of rows.keys()) lastRow = Math.max(lastRow, r);
      const empty = new Map<number, StoredCell>();
      if (!sheets.has(ref.name)) sheets.set(ref.name, { name: ref.name, lastRow, row: (r) => rows.get(r) ?? empty });
    }
    return { path, order: info.sheets.map((s) => s.name), sheet: (name) => sheets.get(name) };
  } finally {
    pkg.close();
  }
}

/** A sheet's XML events → its cells by row and column. */
class CellsReader extends SheetCellEvents {
  readonly rows = new Map<number, Map<number, StoredCell>>();
  private rowNumber = 0;
  private column = 0;
  private cells = new Map<number, StoredCell>();
  private ref: { row: number; column: number } = { row: 0, column: 0 };
  /** Shared formulas by group index: the first cell's formula and place. */
  private readonly shared = new Map<string, { formula: string; row: number; column: number }>();

  private readonly strings: SharedStrings | undefined;

  constructor(
    private readonly sheet: string,
    private readonly book: { strings: SharedStrings | undefined; dates: { styles: boolean[]; date1904: boolean } },
    private readonly damaged: (text: string) => StopError,
  ) {
    super();
    this.strings = book.strings;
  }

  protected startRow(text: string | undefined): void {
    const r = text === undefined ? this.rowNumber + 1 : Number(text);
    if (!Number.isInteger(r) || r < 1) throw this.damaged(`a row is numbered "${text}"; expected a row number from 1`);
    this.rowNumber = r;
    this.column = 0;
    this.cells = this.rows.get(r) ?? new Map();
  }

  protected override startCell(): void {
    this.ref = this.cellRef === undefined ? { row: this.rowNumber, column: this.column + 1 } : this.parseRef(this.cellRef);
  }

  private parseRef(ref: string): { row: number; column: number } {
    const m = /^\$?([A-Za-z]{1,3})\$?(\d{1,7})$/.exec(ref.trim());
    if (!m) throw this.damaged(`a cell is named "${ref}"; expected a reference such as "B3"`);
    return { column: columnNumber(m[1]!), row: Number(m[2]) };
  }

  protected endRow(): void {
    if (this.cells.size > 0) this.rows.set(this.rowNumber, this.cells);
    this.cells = new Map();
  }

  protected endCell(): void {
    const { row, column } = this.ref;
    this.column = column;
    let formula = this.formula ?? undefined;
    const sharedIndex = this.sharedFormula?.si;
    if (sharedIndex !== undefined) {
      const first = this.shared.get(sharedIndex);
      if (formula !== undefined && formula !== '') this.shared.set(sharedIndex, { formula, row, column });
      else if (first !== undefined) {
        formula = shiftFormula(first.formula, row - first.row, column - first.column);
        if (formula === undefined) throw this.damaged(`the formula shared into cell ${this.refText()} reaches past the sheet's edge`);
      } else throw this.damaged(`cell ${this.refText()} shares formula ${sharedIndex}, which no earlier cell states`);
    }
    const v = this.value;
    if (formula !== undefined) {
      // A formula's result is missing when there is no <v>, or an empty one that is not a text result.
      const noCachedValue = v === null || (v === '' && this.cellType !== 'str');
      const cell: StoredCell = noCachedValue ? { value: null, formula, noCachedValue } : { value: this.plain(v), formula };
      this.cells.set(column, cell);
      return;
    }
    const value = this.cellType === 'inlineStr' ? decodeEscapes(this.inlineText ?? v ?? '') : v === null ? null : this.plain(v);
    if (value === null || value === '') return;
    // Styles are not content; a date style only says how to show a number typed as a date (the sign-off).
    const date = typeof value === 'number' && this.book.dates.styles[this.cellStyle] ? serialToIso(value, this.book.dates.date1904) : undefined;
    this.cells.set(column, date === undefined ? { value } : { value, date });
  }

  private refText(): string {
    let s = '';
    for (let k = this.ref.column; k > 0; k = Math.floor((k - 1) / 26)) s = String.fromCharCode(65 + ((k - 1) % 26)) + s;
    return `"${this.sheet}"!${s}${this.ref.row}`;
  }

  /** A `<v>` as its type says: numbers as numbers, TRUE/FALSE, shared strings looked up, everything else as text. */
  private plain(v: string): CellValue {
    switch (this.cellType) {
      case 'n': {
        if (v.trim() === '') return null;
        const n = Number(v);
        return Number.isFinite(n) ? n : v;
      }
      case 's': {
        const i = Number(v);
        if (this.strings === undefined || !Number.isInteger(i) || i < 0 || i >= this.strings.count) {
          throw this.damaged(`cell ${this.refText()} refers to shared string "${v}", which the workbook does not hold`);
        }
        return this.strings.get(i);
      }
      case 'b':
        return v.trim() === '1' || v.trim() === 'true' ? 'TRUE' : v.trim() === '0' || v.trim() === 'false' ? 'FALSE' : v;
      case 'd':
        return isoCellText(v) ?? v;
      case 'str':
      case 'inlineStr':
        return decodeEscapes(v);
      default:
        return v; // an error ("#DIV/0!") or an unknown type: its text
    }
  }
}
