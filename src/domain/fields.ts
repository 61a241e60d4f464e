/**
 * The canonical fields of a worklist (DESIGN.md §4): what each means to the
 * engine, whether it is text or a number, and which quantity its unit measures.
 */

export type Dimension = 'volume' | 'concentration' | 'extract_concentration' | 'none';

export interface FieldSpec {
  name: CanonicalField;
  kind: 'text' | 'number';
  dimension: Dimension;
  required: boolean;
  description: string;
}

export const CANONICAL_FIELDS = [
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
  'log_k',
  'ph',
  'pka',
  'acid_base',
  'spike_conc',
  'qc_level',
  'reporting_limit',
  'istd_response',
] as const;

export type CanonicalField = (typeof CANONICAL_FIELDS)[number];

const specs: Omit<FieldSpec, 'name'>[] = [
  { kind: 'text', dimension: 'none', required: true, description: 'Sample identifier, kept verbatim' },
  { kind: 'text', dimension: 'none', required: false, description: 'sample, blank, lcs, lcsd, ms, msd, dup, qc, mdl or calibrator' },
  { kind: 'text', dimension: 'none', required: false, description: 'The native sample of an ms, msd or dup; the lcs of an lcsd' },
  { kind: 'text', dimension: 'none', required: false, description: 'Preparation batch' },
  { kind: 'text', dimension: 'none', required: true, description: 'Analyte name' },
  { kind: 'number', dimension: 'extract_concentration', required: true, description: 'Concentration measured in the final extract' },
  { kind: 'number', dimension: 'volume', required: true, description: 'Aqueous sample volume V_aq' },
  { kind: 'number', dimension: 'volume', required: true, description: 'Organic solvent volume per extraction V_org' },
  { kind: 'number', dimension: 'none', required: false, description: 'Number of successive extractions n' },
  { kind: 'number', dimension: 'volume', required: false, description: 'Final extract volume (default n × V_org)' },
  { kind: 'number', dimension: 'none', required: false, description: 'Dilution factor of the extract before measurement' },
  { kind: 'number', dimension: 'none', required: false, description: 'Partition coefficient K = C_org/C_aq of the neutral form' },
  { kind: 'number', dimension: 'none', required: false, description: 'log10 of the partition coefficient' },
  { kind: 'number', dimension: 'none', required: false, description: 'pH of the aqueous phase' },
  { kind: 'number', dimension: 'none', required: false, description: 'pKa of the acid or of the conjugate acid of a base' },
  { kind: 'text', dimension: 'none', required: false, description: 'acid, base or neutral' },
  { kind: 'number', dimension: 'concentration', required: false, description: 'Spike added (sample units) or a QC nominal' },
  { kind: 'text', dimension: 'none', required: false, description: 'Level of a qc row, e.g. lloq, low, mid, high' },
  { kind: 'number', dimension: 'concentration', required: false, description: 'Reporting limit for this row (sample units)' },
  { kind: 'number', dimension: 'none', required: false, description: "Internal-standard response of the row (peak area or height), judged against the run's mean" },
];

export const FIELD_SPECS: ReadonlyMap<CanonicalField, FieldSpec> = new Map(
  CANONICAL_FIELDS.map((name, i) => [name, { name, ...specs[i]! }]),
);

/**
 * The canonical sample types. `calibrator` covers calibration standards, system-suitability
 * and other rows a lab exports beside its samples: carried into every output verbatim, never
 * computed or judged. `mdl` is a low-level spiked blank for the method detection limit
 * (40 CFR 136 Appendix B, Revision 2): computed like an lcs, judged only by recovery limits
 * the method gives for it, and kept in the QC history for `phasebook figures`.
 */
export const SAMPLE_TYPES = ['sample', 'blank', 'lcs', 'lcsd', 'ms', 'msd', 'dup', 'qc', 'mdl', 'calibrator'] as const;
export type SampleType = (typeof SAMPLE_TYPES)[number];

/** QC levels in concentration order (common practice); compareLevels puts any other level after them, by name. */
const LEVEL_ORDER = ['lloq', 'low', 'mid', 'medium', 'high', 'uloq'];

/** Order of two QC levels: none first, then lloq, low, mid, high, uloq, then others by name; case and spaces ignored. */
export function compareLevels(a: string, b: string): number {
  const x = a.trim().toLowerCase();
  const y = b.trim().toLowerCase();
  const rank = (l: string) => (l === '' ? -1 : LEVEL_ORDER.includes(l) ? LEVEL_ORDER.indexOf(l) : LEVEL_ORDER.length);
  return rank(x) - rank(y) || (x < y ? -1 : x > y ? 1 : 0);
}

export function isCanonicalField(name: string): name is CanonicalField {
  return FIELD_SPECS.has(name as CanonicalField);
}

/** Header comparison key: lower case, anything but letters and digits dropped. */
export function headerKey(text: string): string {
  return text
    .normalize('NFKC')
    .toLowerCase()
    .replace(/[^\p{L}\p{N}]+/gu, '');
}

/** Columns a formula may read besides the canonical fields and other formulas (their kind, and what they hold). */
export const DERIVED_COLUMNS: Record<string, { kind: 'number' | 'text'; description: string }> = {
  surrogate: { kind: 'number', description: '1 when the method marks the analyte as a surrogate, else 0' },
};
