import type { RecalcResult } from '../pipeline.js';
import type { RawCell } from '../read/types.js';

/**
 * The columns every results output carries, in order (DESIGN.md §4): the input
 * columns verbatim, then the computed columns (a unit suffix on dimensioned
 * ones), then `flags` and `qc_status`.
 */
export type OutputColumn =
  | { role: 'input'; header: string; kind: 'text'; values: readonly RawCell[]; inputIndex: number }
  | { role: 'computed'; header: string; name: string; unit: string; kind: 'number'; values: Float64Array }
  | { role: 'flags' | 'qc_status'; header: string; kind: 'text'; values: readonly string[] };

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
  out.push({ role: 'flags', header: 'flags', kind: 'text', values: result.rowFlags });
  out.push({ role: 'qc_status', header: 'qc_status', kind: 'text', values: result.qc.status });
  return out;
}

/** `pre_extraction_conc [ng/mL]`; percent and dimensionless columns carry no suffix (the name says _pct). */
export function computedHeader(name: string, unit: string): string {
  return unit && unit !== '%' ? `${name} [${unit}]` : name;
}
