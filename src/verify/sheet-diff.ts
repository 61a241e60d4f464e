import { columnLetter, isEmptyValue, type CellValue, type PlannedCell, type PlannedRow, type SheetPlan } from '../write/workbook/cells.js';
import { showFormula, showValue, type Difference } from './difference.js';
import { canonicalFormula } from '../write/workbook/canonical.js';
import type { StoredCell, StoredSheet } from './read.js';

/** Numbers agree within a relative 1e-9 (a spreadsheet that recalculates may differ in the last digits). */
export const VALUE_TOLERANCE = 1e-9;

export function sameValue(a: CellValue | undefined, b: CellValue | undefined): boolean {
  const ea = isEmptyValue(a);
  const eb = isEmptyValue(b);
  if (ea || eb) return ea && eb;
  if (typeof a === 'number' && typeof b === 'number') {
    return a === b || Math.abs(a - b) <= VALUE_TOLERANCE * Math.max(Math.abs(a), Math.abs(b)) + 1e-12;
  }
  return a === b;
}

/** Formula text as compared (canonicalFormula): the same formula however a program spells it. */
export function normaliseFormula(f: string): string {
  return canonicalFormula(f);
}

/** Whether two formulas mean the same (the same text, or the same canonical form). */
export function sameFormula(a: string, b: string): boolean {
  return a === b || canonicalFormula(a) === canonicalFormula(b);
}

/** What differs between a planned and a stored cell, in words; undefined when they agree. */
export function compareCell(planned: PlannedCell | undefined, stored: StoredCell | undefined): string | undefined {
  const pv = planned?.value ?? null;
  const sv = stored?.value ?? null;
  const pf = planned?.formula;
  const sf = stored?.formula;
  if (pf !== undefined && sf === undefined) {
    return `the formula was replaced by a value: stored ${showValue(sv)}, expected ${showFormula(pf)} giving ${showValue(pv)}`;
  }
  if (pf === undefined && sf !== undefined) {
    return `a formula was put in place of the value: stored ${showFormula(sf)} giving ${showValue(sv)}, expected ${showValue(pv)}`;
  }
  const recomputed = stored?.noCachedValue === true;
  if (pf !== undefined && sf !== undefined && !sameFormula(pf, sf)) {
    const values = recomputed || sameValue(pv, sv) ? '' : ` (stored value ${showValue(sv)}, expected ${showValue(pv)})`;
    return `the formula was changed: stored ${showFormula(sf)}, expected ${showFormula(pf)}${values}`;
  }
  // A formula whose saving program kept no result: the recomputed value stands for it (counted, and said, by the caller).
  if (recomputed) return undefined;
  if (!sameValue(pv, sv)) {
    return pf !== undefined ? `${showFormula(pf)} gives ${showValue(pv)}, but the cell holds ${showValue(sv)}` : `stored ${showValue(sv)}, expected ${showValue(pv)}`;
  }
  return undefined;
}

export interface CompareOptions {
  /** Called with every stored row in order (1-based), e.g. to take the digest. */
  onStoredRow?: (row: number, cells: ReadonlyMap<number, StoredCell>, planned: PlannedRow | undefined) => void;
  /** Rows of the plan not to compare (0-based), e.g. the method text, checked another way. */
  skipRow?: (index: number) => boolean;
  /** Stop comparing after this many sheet rows (the rest is reported another way). */
  rows?: number;
  /** Counts formula cells kept without a result, whose values were recomputed instead of read. */
  recomputed?: { cells: number };
}

/** Compare every cell of a planned sheet with the stored one; cells the reviewer fills in are skipped. */
export function compareSheet(plan: SheetPlan, stored: StoredSheet, options: CompareOptions = {}): Difference[] {
  const out: Difference[] = [];
  const rows = options.rows ?? Math.max(plan.rowCount, stored.lastRow);
  for (let i = 0; i < rows; i++) {
    const planned: PlannedRow | undefined = i < plan.rowCount ? plan.row(i) : undefined;
    const storedCells = stored.row(i + 1);
    options.onStoredRow?.(i + 1, storedCells, planned);
    if (options.skipRow?.(i)) continue;
    const width = Math.max(planned?.cells.length ?? 0, storedCells.size ? Math.max(...storedCells.keys()) : 0);
    for (let col = 1; col <= width; col++) {
      const p = planned?.cells[col - 1];
      if (p?.free) continue;
      const s = storedCells.get(col);
      if (p === undefined && s === undefined) continue;
      if (s?.noCachedValue && options.recomputed) options.recomputed.cells++;
      const message = compareCell(p, s);
      if (message === undefined) continue;
      out.push({
        sheet: plan.name,
        address: `${columnLetter(col)}${i + 1}`,
        context: planned?.context,
        label: planned?.labels?.[col - 1],
        message,
      });
    }
  }
  return out;
}
