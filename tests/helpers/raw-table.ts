import { CANONICAL_FIELDS } from '../../src/domain/fields.js';
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

/** The canonical fields a typical canonical worklist carries (all but log_k, qc_level and reporting_limit). */
export const CANONICAL_HEADERS: string[] = CANONICAL_FIELDS.filter((f) => f !== 'log_k' && f !== 'qc_level' && f !== 'reporting_limit' && f !== 'istd_response');
