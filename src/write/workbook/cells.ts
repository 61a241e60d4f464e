/**
 * The workbook as data: every sheet is planned as rows of cells (value, formula,
 * note, mark) before anything is written. The writer streams a plan to disk;
 * `phasebook verify` plans the same workbook again from the recomputed result and
 * compares the two cell by cell. One description, two uses: what is written is
 * exactly what is checked.
 */

/** A stored cell value: a number, text, or empty. */
export type CellValue = number | string | null;

/** How a cell is marked for the reviewer (fill colour; see style.ts and the legend). */
export type Mark = 'fail' | 'inform' | 'note';

/** Named cell styles (style.ts turns them into exceljs style objects). */
export type StyleKey =
  | 'title'
  | 'section'
  | 'label'
  | 'header'
  | 'header-input'
  | 'header-as-used'
  | 'header-computed'
  | 'header-status'
  | 'wrap'
  | 'sign-off';

export interface PlannedCell {
  value: CellValue;
  /** Spreadsheet formula without the leading "="; `value` is its cached result. */
  formula?: string;
  /** Cell note (comment) in words. */
  note?: string;
  mark?: Mark;
  style?: StyleKey;
  /** Display format (the stored value stays exact). */
  numFmt?: string;
  /** A cell the reviewer fills in (sign-off): never compared by verify. */
  free?: boolean;
}

export interface RowContext {
  /** 1-based row of the worklist as the lab's file numbers it. */
  worklistRow: number;
  sampleId: string;
}

export interface PlannedRow {
  /** Cells by 0-based column; undefined = nothing in that cell. */
  cells: readonly (PlannedCell | undefined)[];
  /** The worklist row this sheet row is about (for verify's difference lines). */
  context?: RowContext;
  /** A name for each column of this row (e.g. the table's headers), shared between rows. */
  labels?: readonly string[];
}

export interface SheetPlan {
  name: string;
  /** Column widths in characters. */
  widths: readonly number[];
  /** Outline level per column (0 or absent: none); a group of level-1 columns folds away in a spreadsheet program. */
  outlineLevels?: readonly number[];
  /** Rows frozen at the top (and columns at the left). */
  frozen?: { rows: number; columns?: number };
  /** Filter buttons on this 1-based header row, over `columns` columns. */
  autoFilter?: { row: number; columns: number };
  rowCount: number;
  /** Sheet row `index + 1`; called once per row, in order, by the writer. */
  row(index: number): PlannedRow;
}

/** A planned cell; text is made storable first (sheetText), so the plan is exactly what reads back. */
export function cell(value: CellValue, extra?: Omit<PlannedCell, 'value'>): PlannedCell {
  const v = typeof value === 'string' ? sheetText(value) : value;
  return extra === undefined ? { value: v } : { value: v, ...extra };
}

/** 1-based column number → letters (1 → A, 27 → AA). */
export function columnLetter(column: number): string {
  let n = column;
  let s = '';
  while (n > 0) {
    const m = (n - 1) % 26;
    s = String.fromCharCode(65 + m) + s;
    n = Math.floor((n - 1) / 26);
  }
  return s;
}

/** `Sheet!$C$12`: an absolute reference to a cell of another sheet (our sheet names need no quotes). */
export function absoluteRef(sheet: string, column: number, row: number): string {
  return `${sheet}!$${columnLetter(column)}$${row}`;
}

/** `Sheet!$A$3:$B$9`. */
export function absoluteRange(sheet: string, from: { column: number; row: number }, to: { column: number; row: number }): string {
  return `${sheet}!$${columnLetter(from.column)}$${from.row}:$${columnLetter(to.column)}$${to.row}`;
}

/** A number as a formula constant: JS's shortest round-trip text, which spreadsheets read back to the same double. */
export function formulaNumber(x: number): string {
  if (!Number.isFinite(x)) throw new Error(`formulaNumber: ${x} is not finite`);
  const s = String(x).toUpperCase();
  return x < 0 ? `(${s})` : s;
}

/** A text as a formula constant. */
export function formulaText(s: string): string {
  return `"${s.replaceAll('"', '""')}"`;
}

// XML 1.0 cannot carry these; they are replaced so the file stays readable.
// eslint-disable-next-line no-control-regex
const XML_INVALID = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\uFFFE\uFFFF]|[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/g;
const XML_INVALID_ANY = new RegExp(XML_INVALID.source);
const ESCAPE_LIKE = /_(x[0-9A-F]{4}_)/g;

/**
 * Text as it can be stored in an XLSX cell and read back unchanged: CR LF and
 * CR become LF (XML reading does that anyway), characters XML 1.0 cannot hold
 * become U+FFFD, and text beyond the 32,767 characters a cell holds is cut there.
 * Everything else is kept as written.
 */
export function sheetText(s: string): string {
  if (s.length <= MAX_CELL_TEXT && !s.includes('\r') && !XML_INVALID_ANY.test(s)) return s;
  let t = s;
  if (t.includes('\r')) t = t.replace(/\r\n?/g, '\n');
  t = t.replace(XML_INVALID, '\uFFFD');
  if (t.length > MAX_CELL_TEXT) {
    t = t.slice(0, MAX_CELL_TEXT);
    if (/[\uD800-\uDBFF]$/.test(t)) t = t.slice(0, -1); // never half a character
  }
  return t;
}

/** The most characters a spreadsheet cell holds (Excel specifications and limits: 32,767; from memory). */
export const MAX_CELL_TEXT = 32_767;

/**
 * The `_xHHHH_` escape for text written as an inline rich-text string (`<t>`), where
 * readers decode `_xHHHH_`; plain string cells (`<v>`) are read verbatim.
 */
export function escapeForXlsx(s: string): string {
  return s.replace(ESCAPE_LIKE, '_x005F_$1');
}

/** Whether a number or text cell value counts as empty (verify and the digest treat "" as empty). */
export function isEmptyValue(v: CellValue | undefined): boolean {
  return v === null || v === undefined || v === '';
}

/**
 * A sheet as read back from a stored workbook (verify's StoredSheet is one): what each sheet module
 * needs to read back the tables it laid out.
 */
export interface SheetRows {
  /** Last row that holds anything (0 for an empty sheet). */
  lastRow: number;
  /** The cells of a 1-based row by 1-based column (empty cells left out). */
  row(row: number): ReadonlyMap<number, { value: CellValue }>;
}

/** The row whose column A holds `title`, or 0. */
export function titleRow(sheet: SheetRows, title: string): number {
  for (let r = 1; r <= sheet.lastRow; r++) if (sheet.row(r).get(1)?.value === title) return r;
  return 0;
}

/** The rows of the table under a title (its header row skipped), each as `width` values, up to the first empty row. */
export function tableRows(sheet: SheetRows, title: string, width: number, options: { headerOffset?: number } = {}): CellValue[][] | undefined {
  const at = titleRow(sheet, title);
  if (at === 0) return undefined;
  const rows: CellValue[][] = [];
  for (let r = at + (options.headerOffset ?? 2); r <= sheet.lastRow; r++) {
    const cells = sheet.row(r);
    if (cells.size === 0) break;
    rows.push(Array.from({ length: width }, (_, i) => cells.get(i + 1)?.value ?? null));
  }
  return rows;
}
