import type { TrendsSheetInput } from './trends-sheet.js';

/** Facts about the run that only the caller knows. */
export interface RunInfo {
  /** ISO 8601 UTC time of the run (fixed with --timestamp for reproducible files). */
  timestamp: string;
  /** The command line as typed. */
  command: string;
  /** phasebook version. */
  version: string;
  /** Node.js version (default: this process's, `process.version`). */
  node?: string;
}

export interface WorkbookOptions {
  run: RunInfo;
  /**
   * Largest worklist (rows) whose Results sheet gets live formulas; above it the
   * sheet holds values only and says so. Formulas about double the file and its
   * writing time, and a spreadsheet program that recalculates millions of them on
   * opening is slow to use. Default DEFAULT_FORMULA_ROW_LIMIT.
   */
  formulaRowLimit?: number;
  /** Most cell notes written in the workbook; marked cells beyond it keep their fill. Default DEFAULT_MAX_NOTES. */
  maxNotes?: number;
  /** The QC history's series for the Trends sheet (without it the sheet says no history was given). */
  history?: TrendsSheetInput;
}

export const DEFAULT_FORMULA_ROW_LIMIT = 100_000;
export const DEFAULT_MAX_NOTES = 10_000;

/**
 * Identifies a phasebook workbook and the layout `verify` expects.
 * Version 3: the Summary sheet's verdict sentence and failed-controls table, the calibrator type, the blank
 * limits and the number format on the Provenance sheet.
 * Version 4: reported_result on the Results sheet, the calibration and reporting section of the Method sheet, a
 * QC level column on the Trends sheet and in the in-house limits table, the mdl type (a Summary column), the
 * expanded uncertainty columns and tables where a run has them; the row check and the integrity digest are taken over the canonical content
 * (canonical.ts: numbers to 15 significant digits, formulas by meaning, no cached results), so that a workbook
 * saved unchanged by a spreadsheet program still verifies; signatures may follow on a sheet of their own.
 * verify reads only the layout it writes: a version-3 workbook lacks this layout's columns and tables, so it is
 * refused with the phasebook version that verifies it, never compared with a plan it was not written by.
 */
export const WORKBOOK_FORMAT = 'phasebook-workbook 4';

