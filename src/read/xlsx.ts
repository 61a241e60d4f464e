/**
 * XLSX worklist reader: one sheet as written, column by column (RawTable).
 *
 * A small streaming reader of our own (ECMA-376 Part 1, SpreadsheetML) on the
 * zip guard, yauzl and saxes (xlsx-package.ts, xlsx-workbook.ts): the sheet's
 * XML is never held whole and only the rows kept take memory. It reads what
 * Excel, LibreOffice, openpyxl, exceljs and instrument software write: shared
 * and inline strings, rich text, formulas with cached values (shared ones
 * too), dates, notes (ignored), missing `r` attributes (positional cells and
 * rows), prefixed namespaces.
 *
 * The header row is the first row with any value; `rowNumbers` are the real
 * sheet rows. Rows with no value in any cell are skipped (trailing or in
 * between), like blank CSV lines.
 *
 * Cell values: numbers stay numbers; text stays text ("0012" stays "0012");
 * a formula gives its cached result; rich text gives its plain text; a date
 * (a number in a date format, or an ISO date cell) gives ISO 8601 text
 * ("2024-05-06", or "2024-05-06T13:30:00" when it has a time: the sheet's wall
 * clock, no zone; "13:30:00" for a time alone); booleans give "TRUE"/"FALSE";
 * an error gives its text ("#DIV/0!"); empty gives null. A merged range's
 * value sits in its top-left cell (the other cells of the range are empty in
 * the file).
 *
 * A cell is what it says or it is flagged: a number cell that does not hold a
 * finite number ("12,5", "NaN", "1e400"), a date cell that is no date, a
 * shared-string cell whose string does not exist, a formula without a saved
 * result: each is a row problem naming the cell and what it held (the cell
 * keeps that text). A row numbered twice, out of order or past 1048576 stops
 * the read with its place.
 */
import { StopError } from '../errors.js';
import { formatBytes } from '../format.js';
import { rowMessage } from '../issues.js';
import { checkInputFile } from './csv.js';
import { ColumnBuilder } from './column-builder.js';
import type { RawCell, RawTable, RowProblem } from './types.js';
import { otherSheets } from './sheets.js';
import { XlsxPackage } from './xlsx-package.js';
import {
  decodeEscapes,
  isoCellText,
  readDateStyles,
  readSharedStrings,
  readWorkbookInfo,
  serialToIso,
  type SharedStrings,
} from './xlsx-workbook.js';
import { SheetCellEvents } from './xlsx-sheet-events.js';
import { checkZip } from './zip-guard.js';

export interface XlsxReadOptions {
  /** Sheet to read, by its exact name. Default: the first sheet. */
  sheet?: string;
  /** Refuse files larger than this, in bytes, before reading. Default 256 MiB. */
  maxBytes?: number;
  /** Refuse workbooks whose parts unpack to more than this, in bytes. Default 512 MiB. */
  maxUnpackedBytes?: number;
}

const MiB = 1024 * 1024;
const DEFAULT_MAX_UNPACKED = 512 * MiB;
/**
 * Unpacked bytes per cell kept: the table may hold (data rows × header columns)
 * and the shared strings may hold at most --max-unpacked / 16 entries. The
 * smallest cell that holds a value, `<c><v>1</v></c>`, is 15 bytes of XML, so
 * a workbook within the limit needs no more; a cell costs the table 8 to 24
 * bytes, so the limit bounds memory (about 1 GiB at the default 512 MiB).
 */
const BYTES_PER_CELL = 16;
/** Last row and column a sheet can have (ECMA-376 Part 1, §18.3.1.73 and §18.3.1.4; Excel's limits). */
const MAX_ROW = 1_048_576;
const MAX_COLUMN = 16_384;
/** Values beyond the header named in one row's message; the rest are counted. */
const MAX_EXTRA_SHOWN = 10;

export async function readXlsx(path: string, options: XlsxReadOptions = {}): Promise<RawTable> {
  await checkInputFile(path, { maxBytes: options.maxBytes });
  const maxUnpacked = options.maxUnpackedBytes ?? DEFAULT_MAX_UNPACKED;
  // The directory alone: yauzl's size validation stops any part that unpacks past what it states while it is read.
  await checkZip(path, { maxUnpackedBytes: maxUnpacked, verifyData: false });
  const maxCells = Math.max(1, Math.floor(maxUnpacked / BYTES_PER_CELL));
  const tooMany = (what: string) =>
    `more ${what} than --max-unpacked (${formatBytes(maxUnpacked)}) allows, one per ${BYTES_PER_CELL} bytes (${maxCells}); raise --max-unpacked to read it`;

  const pkg = await XlsxPackage.open(path);
  try {
    const info = await readWorkbookInfo(pkg);
    const names = info.sheets.map((s) => s.name);
    if (info.sheets.length === 0) throw new StopError('input', 'is not a readable XLSX workbook: it has no worksheets', { file: path });
    const sheet = options.sheet === undefined ? info.sheets[0]! : info.sheets.find((s) => s.name === options.sheet);
    if (!sheet) {
      throw new StopError('input', `has no sheet named "${options.sheet}"; its sheets are ${names.map((n) => `"${n}"`).join(', ')}`, { file: path });
    }
    const hint = options.sheet === undefined ? otherSheets(names) : '';
    if (sheet.part === undefined || !pkg.has(sheet.part)) {
      throw new StopError('input', `sheet "${sheet.name}" holds no cells (it is not a worksheet); expected a worksheet${hint}`, { file: path });
    }
    const dateStyles = await readDateStyles(pkg, info.stylesPart);
    const strings =
      info.sharedStringsPart === undefined
        ? undefined
        : await readSharedStrings(pkg, info.sharedStringsPart, {
            maxStrings: maxCells,
            tooMany: () => new StopError('input', `its shared strings hold ${tooMany('strings')}`, { file: path }),
          });
    const reader = new SheetReader(path, sheet.name, {
      strings,
      dateStyles,
      date1904: info.date1904,
      maxCells,
      sheetBytes: pkg.size(sheet.part),
      tooMany: (row) => new StopError('input', `sheet "${sheet.name}": the sheet holds ${tooMany('cells (data rows × header columns)')}`, { file: path, line: row }),
    });
    await pkg.parse(sheet.part, reader);
    return reader.finish(names, hint);
  } finally {
    pkg.close();
  }
}

interface SheetContext {
  strings: SharedStrings | undefined;
  dateStyles: boolean[];
  date1904: boolean;
  maxCells: number;
  /** Unpacked size of the sheet part (bounds the rows it can hold). */
  sheetBytes: number;
  tooMany: (row: number) => StopError;
}

/** One cell as read: its value and, when it is not what it says, why. */
interface CellRead {
  column: number;
  value: RawCell;
  problem?: string;
}

/** The sheet's XML events → header, then data rows straight into columns. */
class SheetReader extends SheetCellEvents {
  // The row being read.
  private rowNumber = 0;
  private cells: CellRead[] = [];
  private lastColumn = -1;
  // The cell being read.
  private sharedFormulaFrom: string | undefined;
  /** The first cell of each shared formula, by its group index (for messages). */
  private readonly sharedFormulas = new Map<string, string>();
  /** The last row the sheet's `<dimension>` states (0 when none): a hint for sizing the columns. */
  private lastRowStated = 0;
  // The table.
  private headers: string[] | null = null;
  private headerRow = 0;
  private columns: ColumnBuilder | null = null;
  private readonly rowNumbers: number[] = [];
  private readonly problems: RowProblem[] = [];

  constructor(
    private readonly path: string,
    private readonly sheet: string,
    private readonly ctx: SheetContext,
  ) {
    super();
  }

  protected override beforeSheetData(name: string, a: Record<string, string>): void {
    if (name === 'dimension' && a.ref !== undefined) this.lastRowStated = parseCellRef(a.ref.slice(a.ref.indexOf(':') + 1))?.row ?? 0;
  }

  /** A stop at a place in the sheet: the row goes in the location (printed as "file, row N: …"). */
  private stop(row: number | undefined, text: string): StopError {
    return new StopError('input', `sheet "${this.sheet}": ${text}`, row === undefined ? { file: this.path } : { file: this.path, line: row });
  }

  protected startRow(r: string | undefined): void {
    let n: number;
    if (r === undefined) n = this.rowNumber + 1;
    else {
      n = /^\s*\d{1,15}\s*$/.test(r) ? Number(r) : NaN;
      if (!(n >= 1 && n <= MAX_ROW)) {
        throw this.stop(undefined, `a row is numbered "${r}"; expected row numbers from 1 to ${MAX_ROW}, the last row a sheet can have`);
      }
    }
    if (n === this.rowNumber) throw this.stop(n, `the sheet holds this row twice; expected each row once`);
    if (n < this.rowNumber) throw this.stop(n, `the row comes after row ${this.rowNumber}; expected rows in order`);
    this.rowNumber = n;
    this.cells.length = 0;
    this.lastColumn = -1;
  }

  /** The reference of the cell being read ("B3"), from its position when it states none. */
  private ref(): string {
    return this.cellRef ?? `${columnLetters(this.lastColumn + 2)}${this.rowNumber}`;
  }

  protected endCell(): void {
    // A shared formula's group: the cell that states it, or where the group's formula was first stated (for messages).
    if (this.sharedFormula) {
      const { si, ref } = this.sharedFormula;
      const first = this.sharedFormulas.get(si);
      if (first === undefined && ref !== undefined) this.sharedFormulas.set(si, this.ref());
      else this.sharedFormulaFrom = first;
    } else this.sharedFormulaFrom = undefined;
    let column: number;
    if (this.cellRef === undefined) column = this.lastColumn + 1;
    else {
      const at = parseCellRef(this.cellRef);
      if (at === undefined || (at.row !== undefined && at.row !== this.rowNumber)) {
        throw this.stop(this.rowNumber, `the cell reference "${this.cellRef}" is not a cell of this row; expected a reference such as "B${this.rowNumber}"`);
      }
      column = at.column;
    }
    if (column >= MAX_COLUMN) throw this.stop(this.rowNumber, `the cell "${this.cellRef}" lies past column XFD, the last a sheet can have`);
    if (column <= this.lastColumn) {
      throw this.stop(this.rowNumber, `the cell ${columnLetters(column + 1)}${this.rowNumber} comes twice or out of order (after ${columnLetters(this.lastColumn + 1)}${this.rowNumber}); expected each cell once, in column order`);
    }
    const ref = this.cellRef ?? `${columnLetters(column + 1)}${this.rowNumber}`;
    this.lastColumn = column;
    const read = this.cellValue(ref);
    if (read.value === null && read.problem === undefined) return;
    this.cells.push({ column, ...read });
  }

  private cellValue(ref: string): Omit<CellRead, 'column'> {
    const v = this.value;
    const held = (text: string) => `"${text}"`;
    if (this.formula !== null && (v === null || (v === '' && this.cellType !== 'str'))) {
      const what = this.formula !== '' ? `the formula "=${this.formula}"` : this.sharedFormulaFrom ? `the formula shared from cell ${this.sharedFormulaFrom}` : 'the formula';
      return { value: null, problem: `${what} has no saved result; expected a value (open and save the file in a spreadsheet program)` };
    }
    switch (this.cellType) {
      case 'n': {
        if (v === null || v.trim() === '') return { value: null };
        const n = parseXmlNumber(v);
        if (n === undefined) return { value: v, problem: `the cell ${ref} is stored as a number but holds ${held(v)}; expected a finite number` };
        if (this.ctx.dateStyles[this.cellStyle]) {
          const iso = serialToIso(n, this.ctx.date1904);
          if (iso === undefined) return { value: v, problem: `the cell ${ref} has a date format but holds ${v}, which is no day of the calendar; expected a date` };
          return { value: iso };
        }
        return { value: n };
      }
      case 's': {
        if (v === null || v.trim() === '') return { value: null };
        const strings = this.ctx.strings;
        const i = /^\s*\d+\s*$/.test(v) ? Number(v) : NaN;
        if (strings === undefined) {
          return { value: null, problem: `the cell ${ref} refers to shared string ${held(v.trim())}, but the workbook has no shared strings; expected a workbook as a spreadsheet program saves it` };
        }
        if (!(i < strings.count)) {
          return { value: null, problem: `the cell ${ref} refers to shared string ${held(v.trim())}, but the workbook has ${strings.count}; expected a workbook as a spreadsheet program saves it` };
        }
        return { value: strings.get(i) };
      }
      case 'inlineStr':
        return { value: decodeEscapes(this.inlineText ?? v ?? '') || null };
      case 'str':
        return { value: decodeEscapes(v ?? '') || null };
      case 'b': {
        const t = (v ?? '').trim();
        if (t === '') return { value: null };
        if (t === '1' || t === 'true') return { value: 'TRUE' };
        if (t === '0' || t === 'false') return { value: 'FALSE' };
        return { value: v, problem: `the cell ${ref} is stored as TRUE/FALSE but holds ${held(v!)}; expected 0 or 1` };
      }
      case 'e':
        return { value: v === null || v === '' ? null : v };
      case 'd': {
        if (v === null || v.trim() === '') return { value: null };
        const iso = isoCellText(v);
        if (iso === undefined) return { value: v, problem: `the cell ${ref} is stored as a date but holds ${held(v)}; expected an ISO 8601 date such as "2024-05-06"` };
        return { value: iso };
      }
      default:
        return {
          value: v === null || v === '' ? null : v,
          problem: `the cell ${ref} has the type "${this.cellType}", which is not one of the spreadsheet cell types; expected n, s, str, inlineStr, b, e or d`,
        };
    }
  }

  protected endRow(): void {
    const cells = this.cells;
    const r = this.rowNumber;
    if (this.headers === null) {
      if (!cells.some((c) => !isEmpty(c.value))) return;
      const bad = cells.find((c) => c.problem !== undefined);
      if (bad) throw this.stop(r, `the header row cannot be read: ${bad.problem}`);
      let width = 0;
      for (const c of cells) if (!isEmpty(c.value)) width = c.column + 1;
      const headers = new Array<string>(width).fill('');
      for (const c of cells) if (c.column < width && c.value !== null) headers[c.column] = String(c.value);
      const seen = new Map<string, number>();
      for (let c = 0; c < width; c++) {
        const key = headers[c]!.trim();
        if (key === '') continue; // unnamed columns are left to column mapping
        const first = seen.get(key);
        if (first !== undefined) {
          throw new StopError(
            'input',
            `sheet "${this.sheet}": the header "${key}" appears twice (columns ${columnLetters(first + 1)} and ${columnLetters(c + 1)}); expected each header once`,
            { file: this.path, line: r, column: key },
          );
        }
        seen.set(key, c);
      }
      this.headers = headers;
      this.headerRow = r;
      // Columns sized up front from the stated dimension (a hint: the file may lie), within what the
      // cell bound and the part's size allow (a row takes at least the 11 bytes of "<row></row>").
      const expectedRows = Math.min(this.lastRowStated - r, Math.floor(this.ctx.maxCells / Math.max(width, 1)), Math.floor(this.ctx.sheetBytes / 11));
      this.columns = new ColumnBuilder(width, { expectedRows: Math.max(0, expectedRows) });
      return;
    }
    if (!cells.some((c) => !isEmpty(c.value) || c.problem !== undefined)) return;

    const headers = this.headers;
    const width = headers.length;
    const row = this.rowNumbers.length;
    if ((row + 1) * Math.max(width, 1) > this.ctx.maxCells) throw this.ctx.tooMany(r);
    this.rowNumbers.push(r);
    const columns = this.columns!;
    let next = 0;
    const extra: string[] = [];
    let extraCount = 0;
    for (const c of cells) {
      if (c.column < width) {
        while (next < c.column) columns.setCell(next++, row, null);
        columns.setCell(c.column, row, c.value);
        next = c.column + 1;
        if (c.problem !== undefined) this.problems.push({ row, column: headers[c.column], message: rowMessage(r, headers[c.column], c.problem) });
      } else if (!isEmpty(c.value) || c.problem !== undefined) {
        extraCount++;
        if (extra.length < MAX_EXTRA_SHOWN) extra.push(`"${c.value ?? ''}" in column ${columnLetters(c.column + 1)}`);
      }
    }
    while (next < width) columns.setCell(next++, row, null);
    if (extraCount > 0) {
      const more = extraCount > extra.length ? ` and ${extraCount - extra.length} more` : '';
      this.problems.push({ row, message: rowMessage(r, undefined, `values beyond the last header column were dropped: ${extra.join(', ')}${more}`) });
    }
  }

  finish(sheets: string[], hint: string): RawTable {
    const where = `sheet "${this.sheet}"`;
    if (this.headers === null) {
      throw new StopError('input', `${where} is empty, expected a header row and data rows${hint}`, { file: this.path });
    }
    if (this.rowNumbers.length === 0) {
      throw new StopError('input', `${where} has a header row but no data rows, expected at least one row of data below the header${hint}`, { file: this.path });
    }
    const rowCount = this.rowNumbers.length;
    return {
      source: this.path,
      headers: this.headers,
      headerRow: this.headerRow,
      columns: this.columns!.finish(rowCount),
      rowCount,
      rowNumbers: Int32Array.from(this.rowNumbers),
      rowProblems: this.problems,
      format: { kind: 'xlsx', decimalComma: false, sheet: this.sheet, sheets },
    };
  }
}

/**
 * A number as SpreadsheetML stores it (xsd:double, ECMA-376 Part 1, §18.18.11):
 * digits with an optional sign, "." and exponent, spaces around allowed.
 * Undefined for anything else, and for NaN, INF and values past the double range.
 */
function parseXmlNumber(text: string): number | undefined {
  const t = text.trim();
  if (!/^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/.test(t)) return undefined;
  const n = Number(t);
  return Number.isFinite(n) ? n : undefined;
}

/**
 * "B3" → column 1 (0-based) and row 3; "B" alone (no row) is a column; "$B$3"
 * as "B3"; undefined when it is no reference. Written out by hand: it runs
 * for every cell.
 */
function parseCellRef(ref: string): { column: number; row: number | undefined } | undefined {
  let i = 0;
  const n = ref.length;
  if (i < n && ref.charCodeAt(i) === 36) i++; // $
  let column = 0;
  const start = i;
  for (; i < n; i++) {
    const ch = ref.charCodeAt(i) | 0x20; // lower case
    if (ch < 97 || ch > 122) break;
    column = column * 26 + (ch - 96);
  }
  if (i === start || i - start > 3) return undefined;
  if (i < n && ref.charCodeAt(i) === 36) i++;
  if (i === n) return { column: column - 1, row: undefined };
  let row = 0;
  const digits = i;
  for (; i < n; i++) {
    const d = ref.charCodeAt(i) - 48;
    if (d < 0 || d > 9) return undefined;
    row = row * 10 + d;
  }
  return i - digits > 9 ? undefined : { column: column - 1, row };
}

function isEmpty(value: RawCell): boolean {
  return value === null || (typeof value === 'string' && value.trim() === '');
}

/** 1 → "A", 27 → "AA". */
function columnLetters(n: number): string {
  let s = '';
  for (let k = n; k > 0; k = Math.floor((k - 1) / 26)) s = String.fromCharCode(65 + ((k - 1) % 26)) + s;
  return s;
}
