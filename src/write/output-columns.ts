import type { RecalcResult } from '../pipeline.js';
import type { RawCell } from '../read/types.js';
import type { Method } from '../domain/method.js';

/**
 * The columns every results output carries, in order (DESIGN.md §4): the input
 * columns verbatim, then the computed columns (a unit suffix on dimensioned
 * ones), the expanded uncertainty of the results when there is one, then `flags`,
 * `qc_status` and `reported_result`.
 */
export type OutputColumn =
  | { role: 'input'; header: string; kind: 'text'; values: readonly RawCell[]; inputIndex: number }
  | { role: 'computed'; header: string; name: string; unit: string; kind: 'number'; values: Float64Array }
  | { role: 'uncertainty'; header: string; name: UncertaintyColumnName; unit: string; kind: 'number'; values: Float64Array }
  | { role: 'flags' | 'qc_status' | 'reported_result'; header: string; kind: 'text'; values: readonly string[] };

export function outputColumns(result: RecalcResult): OutputColumn[] {
  const out: OutputColumn[] = result.raw.headers.map((header, i) => ({
    role: 'input' as const,
    header,
    kind: 'text' as const,
    values: result.raw.columns[i]!,
    inputIndex: i,
  }));
  for (const def of result.method.formulas) {
    out.push({
      role: 'computed',
      header: computedHeader(def.name, def.unit),
      name: def.name,
      unit: def.unit,
      kind: 'number',
      values: result.computed.get(def.name)!,
    });
  }
  // The expanded uncertainty beside the concentrations, when the method or the QC history gives one (qc/uncertainty.ts).
  const u = result.uncertainty;
  if (u) {
    out.push({ role: 'uncertainty', header: computedHeader(UNCERTAINTY_COLUMNS.expanded, u.unit), name: UNCERTAINTY_COLUMNS.expanded, unit: u.unit, kind: 'number', values: u.expanded });
    out.push({ role: 'uncertainty', header: UNCERTAINTY_COLUMNS.k, name: UNCERTAINTY_COLUMNS.k, unit: '', kind: 'number', values: u.k });
  }
  out.push({ role: 'flags', header: 'flags', kind: 'text', values: result.rowFlags });
  out.push({ role: 'qc_status', header: 'qc_status', kind: 'text', values: result.qc.status });
  out.push({ role: 'reported_result', header: reportedHeader(result.method), kind: 'text', values: result.qc.reported });
  return out;
}

/** `reported_result [ug/L]`: text, in the method's concentration unit. */
export function reportedHeader(method: Method): string {
  return computedHeader('reported_result', method.units.concentration);
}

/** The columns of a result's expanded uncertainty: U in the result's unit, and the coverage factor k of it. */
export const UNCERTAINTY_COLUMNS = { expanded: 'expanded_uncertainty', k: 'coverage_factor' } as const;
export type UncertaintyColumnName = (typeof UNCERTAINTY_COLUMNS)[keyof typeof UNCERTAINTY_COLUMNS];

/** `pre_extraction_conc [ng/mL]`; percent and dimensionless columns carry no suffix (the name says _pct). */
export function computedHeader(name: string, unit: string): string {
  return unit && unit !== '%' ? `${name} [${unit}]` : name;
}

/**
 * Reported results with the CSV's decimal mark ("0,123", "< 0,05"), as its numbers
 * are written; the method's own words for above the range are left as written.
 */
export function reportedWithMark(values: readonly string[], method: Method, decimal: '.' | ','): readonly string[] {
  if (decimal === '.') return values;
  const words = method.reporting.aboveRange;
  // Every mark: "x ± U" holds two numbers.
  return values.map((v) => (v.startsWith(words) ? v : v.replaceAll('.', ',')));
}
