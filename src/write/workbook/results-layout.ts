/**
 * Where each column of the Results sheet is (DESIGN.md §6): the worklist's columns, the
 * worklist row, the as-used columns, the computed columns, flags, qc_status,
 * reported_result and the row check. The sheet's planner (results-sheet.ts), the as-used
 * cells (as-used.ts) and verify all place cells by this one layout.
 */
import { DERIVED_COLUMNS, FIELD_SPECS, type CanonicalField } from '../../domain/fields.js';
import type { RecalcResult } from '../../pipeline.js';
import { computedHeader, outputColumns, reportedHeader } from '../output-columns.js';
import { columnLetter } from './cells.js';

export const RESULTS_SHEET = 'Results';
export const WORKLIST_ROW_HEADER = 'worklist row';
export const ROW_CHECK_HEADER = 'row check';

export type ResultsColumnKind = 'input' | 'worklist-row' | 'as-used' | 'computed' | 'uncertainty' | 'flags' | 'qc-status' | 'reported' | 'row-check';

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
}

export interface ResultsLayout {
  columns: ResultsColumn[];
  headers: string[];
  inputCount: number;
  asUsed: Map<string, ResultsColumn>;
  computed: Map<string, ResultsColumn>;
  /** The expanded uncertainty of the results and its k, when the run has one (figures/expanded.ts). */
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
  const push = (c: Omit<ResultsColumn, 'column' | 'letter'>): ResultsColumn => {
    const column = columns.length + 1;
    const col = { ...c, column, letter: columnLetter(column) };
    columns.push(col);
    return col;
  };
  result.raw.headers.forEach((header, i) => push({ kind: 'input', header, inputIndex: i }));
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
  const flags = push({ kind: 'flags', header: 'flags' });
  const qcStatus = push({ kind: 'qc-status', header: 'qc_status' });
  const reported = push({ kind: 'reported', header: reportedHeader(result.method) });
  const rowCheck = push({ kind: 'row-check', header: ROW_CHECK_HEADER });
  return {
    columns,
    headers: columns.map((c) => c.header),
    inputCount: result.raw.headers.length,
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
