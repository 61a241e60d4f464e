/**
 * `method check METHOD --worklist FILE` (issue 13): for one worklist, which header feeds
 * each field, which fields fall back to a default or to the method's analyte data, and
 * which headers are carried unused, so that nothing the analyst put in is silently left
 * out and no field silently defaults.
 */
import { CANONICAL_FIELDS, FIELD_SPECS, type CanonicalField } from '../../domain/fields.js';
import type { ColumnMap } from '../../columns/map.js';
import { canonicalUnitText } from '../../columns/units.js';
import type { RawTable } from '../../read/types.js';
import type { AnalyteInfo, Method } from '../../domain/method.js';

/** Analyte data that stands in for a missing column. */
const ANALYTE_DATA: Partial<Record<CanonicalField, keyof AnalyteInfo>> = {
  partition_coeff: 'partition_coeff',
  log_k: 'log_k',
  pka: 'pka',
  ph: 'ph',
  acid_base: 'acid_base',
  reporting_limit: 'reporting_limit',
};

/** What a field is when no column feeds it (DESIGN.md §4). */
const BUILT_IN: Partial<Record<CanonicalField, string>> = {
  final_volume: 'extractions × solvent_volume (the whole extract: never concentrated or made up)',
  extractions: '1 extraction',
  dilution: '1 (no dilution)',
  sample_type: 'sample, on every row',
  batch_id: 'one batch',
  partition_coeff: 'none: extraction efficiency taken as 100 %',
  acid_base: 'neutral',
};

export function describeFeeds(raw: RawTable, map: ColumnMap, method: Method): string {
  const lines = [`Worklist ${raw.source}, read with method ${method.name}:`];
  const width = Math.max(...CANONICAL_FIELDS.map((f) => f.length)) + 2;
  lines.push('', 'Field'.padEnd(width) + 'Fed by');
  const defaulted: string[] = [];
  for (const field of CANONICAL_FIELDS) {
    const src = map.fields.get(field);
    if (src) {
      const converted = src.fromUnit !== '' && canonicalUnitText(src.fromUnit) !== canonicalUnitText(src.toUnit);
      const unit = converted ? `, in ${src.fromUnit}, read as ${src.toUnit}` : src.fromUnit ? `, in ${src.fromUnit}` : '';
      lines.push(`${field.padEnd(width)}column "${src.header}"${unit}`);
      continue;
    }
    const fallback = fallbackOf(field, method);
    lines.push(`${field.padEnd(width)}no column: ${fallback}`);
    if (FIELD_SPECS.get(field)!.kind === 'number' && !fallback.startsWith('empty')) defaulted.push(field);
  }
  const unused = map.unmapped.map((c) => `"${raw.headers[c]}"`);
  lines.push('', unused.length ? `Carried unused (kept verbatim in the outputs): ${unused.join(', ')}` : 'Every column feeds a field.');
  if (defaulted.length) lines.push(`Defaulted: ${defaulted.join(', ')}; if a column above holds one of them, name it under fields.<field>.aliases.`);
  for (const note of map.notes) lines.push(`Note: ${note}.`);
  return lines.join('\n') + '\n';
}

function fallbackOf(field: CanonicalField, method: Method): string {
  const declared = method.fields.get(field)?.default;
  if (declared !== undefined) return `the method's default, ${declared}`;
  const key = ANALYTE_DATA[field];
  if (key) {
    const having = method.analytes.filter((a) => a[key] !== undefined).map((a) => `${a.name} ${String(a[key])}`);
    const rest = BUILT_IN[field] ? `; other analytes: ${BUILT_IN[field]}` : '; other analytes: empty';
    if (having.length) return `the method's analyte data (${having.join(', ')})${rest}`;
  }
  return BUILT_IN[field] ?? 'empty';
}
