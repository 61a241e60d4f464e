/**
 * Row-level findings are data (STYLE.md habit 4): an input error on a row, a QC
 * flag, a note for the reviewer. All of them travel to every output.
 */

/** Flag codes of DESIGN.md §5; they appear `;`-separated in the flags column, in this order. */
export const FLAG_CODES = [
  'INPUT_ERROR',
  'NO_PARENT',
  'REC_LOW',
  'REC_HIGH',
  'RPD_HIGH',
  'BLANK_HIT',
  'BELOW_RL',
  'OVER_RANGE',
  'ISTD_RESPONSE',
  'OUTLIER',
  'NOT_DETECTED',
  'LCS_ASSOC',
  'MATRIX_ASSOC',
  'SURROGATE_ASSOC',
  'BLANK_ASSOC',
] as const;
export type FlagCode = (typeof FLAG_CODES)[number];

/** Codes that fail a control row (DESIGN.md §5; ISTD_RESPONSE, issue 14); OUTLIER alone only informs. */
export const FAILING_CODES: ReadonlySet<FlagCode> = new Set(['REC_LOW', 'REC_HIGH', 'RPD_HIGH', 'BLANK_HIT', 'NO_PARENT', 'ISTD_RESPONSE']);

export interface Flag {
  /**
   * 0-based index of the data row (the first row under the header is 0): an index into
   * a result's rows and columns. Not the row a spreadsheet user counts: in a result, that
   * is `spreadsheetRow` (ResultFlag).
   */
  row: number;
  code: FlagCode;
  /** The column the flag is about (canonical or computed name), for marking the cell. */
  column?: string;
  /** Reason in words. */
  message: string;
  value?: number | string;
  /** The limit broken, in words or as a number (e.g. "70–130 %", 20). */
  limit?: number | string;
}

/**
 * A note for the reviewer that is not a flag (it changes no status and does not
 * appear in the flags column): e.g. "no partition coefficient: E taken as 100 %".
 */
export interface Note {
  /** 0-based index of the data row, as Flag's `row`; in a result, `spreadsheetRow` is the row a spreadsheet user counts. */
  row: number;
  column?: string;
  message: string;
}

/** The row a spreadsheet user counts, which src/pipeline.ts gives every flag and note of a result. */
export interface SpreadsheetRow {
  /** The worklist row as a spreadsheet user counts it (the header is row 1), the row every message names. */
  spreadsheetRow: number;
}

/** A flag of a recalculation's result: `row` indexes the result's rows, `spreadsheetRow` is the one a user counts. */
export type ResultFlag = Flag & SpreadsheetRow;
/** A note of a recalculation's result, located as a ResultFlag is. */
export type ResultNote = Note & SpreadsheetRow;

/** Build the message grammar of STYLE.md habit 7: `row 14, column "x": ...`. */
export function rowMessage(spreadsheetRow: number, column: string | undefined, text: string): string {
  return column === undefined ? `row ${spreadsheetRow}: ${text}` : `row ${spreadsheetRow}, column "${column}": ${text}`;
}
