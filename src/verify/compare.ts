import { columnLetter, isEmptyValue, type CellValue, type PlannedCell, type PlannedRow, type SheetPlan } from '../write/workbook/cells.js';
import { showFormula, showValue, type Difference } from './difference.js';
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

const FORMULA_TOKENS = /("(?:[^"]|"")*")|\s+|_xlfn\.|\b(TRUE|FALSE)\(\)|(?<![A-Za-z0-9_.$])(\d+(?:\.\d*)?(?:[eE][+-]?\d+)?)/gi;

/**
 * Formula text as compared: no "=", no `_xlfn.` prefixes, no spaces outside text
 * constants, TRUE()/FALSE() as TRUE/FALSE, and number constants to 15 significant
 * digits (spreadsheet programs save formulas that way, e.g. 999.9999999999999 as 1000).
 */
export function normaliseFormula(f: string): string {
  let s = f.trim();
  if (s.startsWith('=')) s = s.slice(1);
  return s.replace(FORMULA_TOKENS, (_m, quoted?: string, bool?: string, num?: string) => {
    if (quoted !== undefined) return quoted;
    if (bool !== undefined) return bool.toUpperCase();
    if (num !== undefined) return String(Number(Number(num).toPrecision(15)));
    return '';
  });
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
  if (pf !== undefined && sf !== undefined && normaliseFormula(pf) !== normaliseFormula(sf)) {
    const values = sameValue(pv, sv) ? '' : ` (stored value ${showValue(sv)}, expected ${showValue(pv)})`;
    return `the formula was changed: stored ${showFormula(sf)}, expected ${showFormula(pf)}${values}`;
  }
  if (!sameValue(pv, sv)) return `stored ${showValue(sv)}, expected ${showValue(pv)}`;
  return undefined;
}

export interface CompareOptions {
  /** Called with every stored row in order (1-based), e.g. to take the digest. */
  onStoredRow?: (row: number, cells: ReadonlyMap<number, StoredCell>) => void;
  /** Rows of the plan not to compare (0-based), e.g. the method text, checked another way. */
  skipRow?: (index: number) => boolean;
  /** Stop comparing after this many sheet rows (the rest is reported another way). */
  rows?: number;
}

/** Compare every cell of a planned sheet with the stored one; cells the reviewer fills in are skipped. */
export function compareSheet(plan: SheetPlan, stored: StoredSheet, options: CompareOptions = {}): Difference[] {
  const out: Difference[] = [];
  const rows = options.rows ?? Math.max(plan.rowCount, stored.lastRow);
  for (let i = 0; i < rows; i++) {
    const planned: PlannedRow | undefined = i < plan.rowCount ? plan.row(i) : undefined;
    const storedCells = stored.row(i + 1);
    options.onStoredRow?.(i + 1, storedCells);
    if (options.skipRow?.(i)) continue;
    const width = Math.max(planned?.cells.length ?? 0, storedCells.size ? Math.max(...storedCells.keys()) : 0);
    for (let col = 1; col <= width; col++) {
      const p = planned?.cells[col - 1];
      if (p?.free) continue;
      const s = storedCells.get(col);
      if (p === undefined && s === undefined) continue;
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
