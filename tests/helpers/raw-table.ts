import type { RawCell, RawTable } from '../../src/read/types.js';

/** A RawTable from a header and row arrays, as the CSV reader would give it. */
export function rawTable(headers: string[], rows: RawCell[][], options: { decimalComma?: boolean; source?: string } = {}): RawTable {
  return {
    source: options.source ?? 'test.csv',
    headers,
    columns: headers.map((_, c) => rows.map((r) => r[c] ?? null)),
    rowCount: rows.length,
    rowNumbers: Int32Array.from(rows.map((_, i) => i + 2)),
    rowProblems: [],
    format: { kind: 'csv', delimiter: options.decimalComma ? ';' : ',', decimalComma: options.decimalComma ?? false },
  };
}

export const CANONICAL_HEADERS = [
  'sample_id',
  'sample_type',
  'parent_id',
  'batch_id',
  'analyte',
  'extract_conc',
  'sample_volume',
  'solvent_volume',
  'extractions',
  'final_volume',
  'dilution',
  'partition_coeff',
  'ph',
  'pka',
  'acid_base',
  'spike_conc',
];
