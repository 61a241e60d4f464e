import { FIELD_SPECS, type CanonicalField } from './fields.js';

/**
 * What fills an empty numeric field, step by step (DESIGN.md §4), described once: the columns
 * stage fills the table by it (columns/table.ts) and the workbook writes the same chain as the
 * as-used cells' spreadsheet formulas (write/workbook/as-used.ts), so the two cannot drift.
 */
export type Fallback =
  /** 10^log_k of the same row, when that row gives log_k. */
  | { kind: 'ten-to-log-k' }
  /** The row's analyte's value in the method's analytes table. */
  | { kind: 'analyte'; key: 'partition_coeff' | 'pka' | 'ph' | 'reporting_limit' }
  /** The method's defaults.reporting_limit. */
  | { kind: 'method-reporting-limit' }
  /** The method's numeric default for the field (fields.<name>.default), else phasebook's own, `otherwise`. */
  | { kind: 'field-default'; otherwise?: number }
  /** The product of two fields of the row, as filled (final volume = n × V_org). */
  | { kind: 'product'; of: readonly [CanonicalField, CanonicalField] };

const FIELD_DEFAULT: readonly Fallback[] = [{ kind: 'field-default' }];

const CHAINS: Partial<Record<CanonicalField, readonly Fallback[]>> = {
  extractions: [{ kind: 'field-default', otherwise: 1 }],
  dilution: [{ kind: 'field-default', otherwise: 1 }],
  final_volume: [{ kind: 'field-default' }, { kind: 'product', of: ['extractions', 'solvent_volume'] }],
  partition_coeff: [{ kind: 'ten-to-log-k' }, { kind: 'analyte', key: 'partition_coeff' }, { kind: 'field-default' }],
  pka: [{ kind: 'analyte', key: 'pka' }, { kind: 'field-default' }],
  ph: [{ kind: 'analyte', key: 'ph' }, { kind: 'field-default' }],
  reporting_limit: [{ kind: 'analyte', key: 'reporting_limit' }, { kind: 'method-reporting-limit' }, { kind: 'field-default' }],
};

/** The chain of a numeric field; every numeric field takes at least the method's own default. */
export function fallbacksOf(field: CanonicalField): readonly Fallback[] {
  return CHAINS[field] ?? FIELD_DEFAULT;
}

/** phasebook's own default of a field when the method names none (extractions and dilution: 1). */
export function designDefault(field: CanonicalField): number | undefined {
  for (const step of fallbacksOf(field)) if (step.kind === 'field-default' && step.otherwise !== undefined) return step.otherwise;
  return undefined;
}

/** The numeric fields in an order where a product's factors are filled before it. */
export const FILL_ORDER: readonly CanonicalField[] = (() => {
  const numeric = [...FIELD_SPECS.values()].filter((s) => s.kind === 'number').map((s) => s.name);
  const products = numeric.filter((f) => fallbacksOf(f).some((s) => s.kind === 'product'));
  return [...numeric.filter((f) => !products.includes(f)), ...products];
})();

/** The chain in words, for the Method sheet's "when the cell is empty" column ('' when nothing fills it). */
export function fallbackWords(field: CanonicalField, options: { hasDefault: boolean }): string {
  const words: string[] = [];
  for (const step of fallbacksOf(field)) {
    if (step.kind === 'ten-to-log-k') words.push('10^log_k of the row');
    else if (step.kind === 'analyte') words.push(`the analyte's ${step.key === 'reporting_limit' ? 'reporting limit' : step.key} (Analytes)`);
    else if (step.kind === 'method-reporting-limit') words.push("the method's default reporting limit");
    else if (step.kind === 'product') words.push(`${step.of[0]} × ${step.of[1]}`);
    else if (step.otherwise !== undefined || options.hasDefault || words.length > 0) words.push('the default');
  }
  return words.join(', else ');
}
