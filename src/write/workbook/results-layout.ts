/**
 * Where each column of the Results sheet is (DESIGN.md §6). What a reviewer reads first
 * leads: sample_id, analyte, reported_result, flags, qc_status; then the worklist's
 * columns verbatim, the worklist row, the as-used columns, the computed columns (and the
 * expanded uncertainty) and the row check. The verbatim and the as-used columns form an
 * outline group each (outline level 1), so a spreadsheet program folds them away. The
 * sheet's planner (results-sheet.ts), the as-used cells (as-used.ts), the digest's column
 * checks and verify all place cells by this one layout.
 */
import { DERIVED_COLUMNS, FIELD_SPECS, type CanonicalField } from '../../domain/fields.js';
import type { RecalcResult } from '../../pipeline.js';
import { computedHeader, outputColumns, reportedHeader } from '../output-columns.js';
import { columnLetter } from './cells.js';

export const RESULTS_SHEET = 'Results';
export const WORKLIST_ROW_HEADER = 'worklist row';
export const ROW_CHECK_HEADER = 'row check';

export type ResultsColumnKind = 'sample' | 'analyte' | 'input' | 'worklist-row' | 'as-used' | 'computed' | 'uncertainty' | 'flags' | 'qc-status' | 'reported' | 'row-check';

export interface ResultsColumn {
  kind: ResultsColumnKind;
  header: string;
  /** 1-based column number. */
  column: number;
  letter: string;
  /** input: index into the worklist's columns. */
  inputIndex?: number;
  /** as-used: the canonical field (or a derived column such as `surrogate`). */
  field?: string;
  /** computed: the formula column's name. */
  name?: string;
  /** 1 for a column that folds away with its group (the verbatim inputs, the as-used columns), else 0. */
  outlineLevel: 0 | 1;
}

/**
 * The leading columns, before the worklist's: sample_id, analyte, reported_result, flags,
 * qc_status. Their number is fixed, so that verify finds the input columns of a stored
 * sheet before it has planned one.
 */
export const LEADING_COLUMNS = 5;

/** The 1-based column of the worklist's first column on the Results sheet. */
export const FIRST_INPUT_COLUMN = LEADING_COLUMNS + 1;

/** The 1-based Results column of the worklist's column `index` (0-based). */
export function inputColumn(index: number): number {
  return FIRST_INPUT_COLUMN + index;
}

export interface ResultsLayout {
  columns: ResultsColumn[];
  headers: string[];
  inputCount: number;
  sampleId: ResultsColumn;
  analyte: ResultsColumn;
  asUsed: Map<string, ResultsColumn>;
  computed: Map<string, ResultsColumn>;
  /** The expanded uncertainty of the results and its k, when the run has one (qc/uncertainty.ts). */
  uncertainty: ResultsColumn[];
  worklistRow: ResultsColumn;
  flags: ResultsColumn;
  qcStatus: ResultsColumn;
  reported: ResultsColumn;
  rowCheck: ResultsColumn;
}

/** The name the header of an as-used column gives a field. */
export function asUsedHeader(field: string, unit: string): string {
  return unit ? `${field} (as used) [${unit}]` : `${field} (as used)`;
}

/**
 * Fields the formulas read, in canonical order, then derived columns; plus the
 * fields another as-used cell needs (final_volume's default reads extractions and
 * solvent_volume).
 */
export function asUsedFields(result: RecalcResult): string[] {
  const compiled = result.compiled;
  const used = new Set<string>();
  for (const f of compiled.formulas) for (const d of f.dependencies) used.add(d);
  if (used.has('final_volume')) {
    used.add('extractions');
    used.add('solvent_volume');
  }
  const out: string[] = [];
  for (const spec of FIELD_SPECS.values()) if (used.has(spec.name)) out.push(spec.name);
  for (const name of Object.keys(DERIVED_COLUMNS)) if (used.has(name)) out.push(name);
  return out;
}

export function fieldUnit(result: RecalcResult, field: string): string {
  const spec = FIELD_SPECS.get(field as CanonicalField);
  if (!spec || spec.dimension === 'none') return '';
  return spec.dimension === 'volume' ? result.method.units.volume : result.method.units.concentration;
}

export function resultsLayout(result: RecalcResult): ResultsLayout {
  const columns: ResultsColumn[] = [];
  const push = (c: Omit<ResultsColumn, 'column' | 'letter' | 'outlineLevel'>): ResultsColumn => {
    const column = columns.length + 1;
    const col: ResultsColumn = { ...c, column, letter: columnLetter(column), outlineLevel: c.kind === 'input' || c.kind === 'as-used' ? 1 : 0 };
    columns.push(col);
    return col;
  };
  const sampleId = push({ kind: 'sample', header: 'sample_id' });
  const analyte = push({ kind: 'analyte', header: 'analyte' });
  const reported = push({ kind: 'reported', header: reportedHeader(result.method) });
  const flags = push({ kind: 'flags', header: 'flags' });
  const qcStatus = push({ kind: 'qc-status', header: 'qc_status' });
  if (columns.length !== LEADING_COLUMNS) throw new Error(`resultsLayout: ${columns.length} leading columns, LEADING_COLUMNS says ${LEADING_COLUMNS}`);
  result.raw.headers.forEach((header, i) => push({ kind: 'input', header, inputIndex: i }));
  // Between the two groups, so that each folds on its own.
  const worklistRow = push({ kind: 'worklist-row', header: WORKLIST_ROW_HEADER });
  const asUsed = new Map<string, ResultsColumn>();
  for (const field of asUsedFields(result)) {
    asUsed.set(field, push({ kind: 'as-used', header: asUsedHeader(field, fieldUnit(result, field)), field }));
  }
  const computed = new Map<string, ResultsColumn>();
  for (const def of result.method.formulas) {
    computed.set(def.name, push({ kind: 'computed', header: computedHeader(def.name, def.unit), name: def.name }));
  }
  const uncertainty = outputColumns(result)
    .filter((c) => c.role === 'uncertainty')
    .map((c) => push({ kind: 'uncertainty', header: c.header, name: c.name }));
  const rowCheck = push({ kind: 'row-check', header: ROW_CHECK_HEADER });
  return {
    columns,
    headers: columns.map((c) => c.header),
    inputCount: result.raw.headers.length,
    sampleId,
    analyte,
    asUsed,
    computed,
    uncertainty,
    worklistRow,
    flags,
    qcStatus,
    reported,
    rowCheck,
  };
}
