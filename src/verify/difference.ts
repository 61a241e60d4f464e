import type { CellValue, RowContext } from '../write/workbook/cells.js';

/** One thing that differs between a workbook and its recomputation. */
export interface Difference {
  sheet: string;
  /** Cell address such as "P7" (absent for a whole-sheet difference). */
  address?: string;
  context?: RowContext;
  /** What the cell is (its column header or key). */
  label?: string;
  /** What differs, in words, with the two values. */
  message: string;
}

const MAX_FORMULA_SHOWN = 120;

/** A value as a difference line shows it: numbers in full, text quoted, "(empty)". */
export function showValue(v: CellValue | undefined): string {
  if (v === null || v === undefined || v === '') return '(empty)';
  return typeof v === 'number' ? String(v) : JSON.stringify(v);
}

export function showFormula(f: string): string {
  const text = `=${f}`;
  return text.length > MAX_FORMULA_SHOWN ? `${text.slice(0, MAX_FORMULA_SHOWN - 1)}…` : text;
}

/**
 * One line: `Results!Q7, worklist row 7, sample "KB-01 Weir", sample_volume (as used) [mL]: stored 900, expected 1000`.
 */
export function formatDifference(d: Difference): string {
  const parts = [d.address ? `${d.sheet}!${d.address}` : d.sheet];
  if (d.context) parts.push(`worklist row ${d.context.worklistRow}`, `sample ${JSON.stringify(d.context.sampleId)}`);
  if (d.label) parts.push(d.label);
  return `${parts.join(', ')}: ${d.message}`;
}
