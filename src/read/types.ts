import type { NumberFormat } from '../domain/number-format.js';
/**
 * What a reader hands forward: the worklist exactly as written, column by column.
 *
 * Cells stay verbatim (strings from CSV; strings or numbers from XLSX, where a
 * number stored as text stays the string and a formula cell gives its cached
 * value). Nothing is parsed into canonical fields here; that is the columns stage.
 */
export type RawCell = string | number | null;

export interface RawTable {
  /** The file the table came from, as given by the user (for messages). */
  source: string;
  /** Header texts, verbatim (a UTF-8 BOM removed). */
  headers: string[];
  /** 1-based spreadsheet row of the header (1 unless blank rows come first). */
  headerRow?: number;
  /** Column-major cells: columns[c][r]; a short row's missing cells are null. */
  columns: RawCell[][];
  /** Number of data rows. */
  rowCount: number;
  /** 1-based spreadsheet row number of each data row (the header is row 1). */
  rowNumbers: Int32Array;
  /** Row-level damage found while reading (short or long row), as data. */
  rowProblems: RowProblem[];
  /** Facts about the file for provenance and number parsing. */
  format: {
    kind: 'csv' | 'xlsx';
    /** CSV only: the delimiter used. */
    delimiter?: ',' | ';' | '\t';
    /**
     * The reader's guess of the decimal mark (a semicolon CSV: decimal comma). Only a hint:
     * the columns stage decides the number format from the cells (columns/number-format.ts).
     */
    decimalComma: boolean;
    /** A number format fixed in advance (verify sets the one the run decided); otherwise decided from the cells. */
    numberFormat?: NumberFormat;
    /** CSV only: the file began with a byte-order mark (the results CSV then does too). */
    bom?: boolean;
    /** XLSX only: the sheet read. */
    sheet?: string;
    /** XLSX only: every sheet of the workbook, in order (for messages that suggest another). */
    sheets?: string[];
  };
}

export interface RowProblem {
  /** 0-based data row index. */
  row: number;
  /** Column header the problem concerns, if one. */
  column?: string;
  message: string;
}
