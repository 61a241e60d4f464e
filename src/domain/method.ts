import type { CanonicalField, SampleType } from './fields.js';
import type { AcidBase } from '../chemistry/partition.js';

export type Range = readonly [number, number];

export interface LimitSet {
  recovery?: Range;
  rpd_max?: number;
  /** Blanks: the part of the reporting limit a blank must stay below (bioanalysis: 0.2, ICH M10); default 1, the RL itself. */
  max_fraction_of_rl?: number;
  levels?: Record<string, LimitSet>;
}

export type ControlKind = 'blank' | 'lcs' | 'lcsd' | 'ms' | 'msd' | 'dup' | 'qc' | 'mdl' | 'surrogate';
export type LimitTable = Partial<Record<ControlKind, LimitSet>>;

export interface FieldConfig {
  aliases: string[];
  unit?: string;
  default?: number | string;
}

export interface AnalyteInfo {
  /** Name as written in the method. */
  name: string;
  aliases: string[];
  partition_coeff?: number;
  log_k?: number;
  pka?: number;
  acid_base?: AcidBase;
  ph?: number;
  reporting_limit?: number;
  calibration_range?: Range;
  molar_mass?: number;
  surrogate: boolean;
  limits: LimitTable;
  /** Relative standard uncertainty of the spike, percent: u(Cref) of the Nordtest bias (figures/). */
  spike_uncertainty_pct?: number;
  /** A fixed expanded uncertainty U (k = 2), percent of the result, instead of the one from the QC history. */
  expanded_uncertainty_pct?: number;
}

export interface FormulaDef {
  name: string;
  expr: string;
  /** Unit shown in the header, resolved to a unit text ('' when dimensionless). */
  unit: string;
  description?: string;
  /** 1-based line of the expression in the method file, for messages. */
  line?: number;
}

export interface QcOptions {
  /**
   * Which recovery limits judge controls: the method's fixed ones, or in-house control
   * limits (mean ± 3s) from the QC history where it holds enough points.
   */
  limitsSource: 'fixed' | 'in_house';
  outlierTest: 'grubbs' | 'dixon' | 'none';
  alpha: number;
  runRule: 'auto' | 'on' | 'off';
  runRuleAll: number;
  runRulePerLevel: number;
}

export interface Method {
  name: string;
  title: string;
  version?: string;
  description?: string;
  /** Where it was loaded from, its text and SHA-256 (provenance). */
  file: string;
  text: string;
  sha256: string;
  units: { volume: string; concentration: string; extract_concentration: string };
  fields: Map<CanonicalField, FieldConfig>;
  /** Lab code (lower case, trimmed) → canonical sample type. */
  sampleTypes: Map<string, SampleType>;
  /** Lab code (lower case, trimmed) → the QC level it carries ("QC Low": { type: qc, level: low }). */
  sampleTypeLevels: Map<string, string>;
  /** How the worklist writes numbers, when the method declares it (else decided per file: columns/number-format.ts). */
  numberFormat?: { decimal_mark: '.' | ','; grouping?: 'none' | '.' | ',' | ' ' | "'" };
  /** The lab's own words for "not detected", besides phasebook's (columns/nondetect.ts). */
  nonDetects: string[];
  /** Analyte by name; look up with `findAnalyte`. */
  analytes: AnalyteInfo[];
  defaults: { reporting_limit?: number };
  limits: LimitTable;
  qc: QcOptions;
  /** How the istd_response field is judged (qc/row-rules.ts, ISTD_RESPONSE). */
  internalStandard: { window: Range; reference: readonly SampleType[] };
  /** How results are reported in reported_result (qc/reported.ts). */
  reporting: ReportingOptions;
  /** true when the calibrators went through the extraction: no efficiency correction (engine/evaluate.ts checks the formula). */
  calibration: { includesExtraction: boolean };
  /** Points the lab's own figures need (figures/): defaults 20 for u(Rw), 6 for the bias. */
  figures: { minPointsRw: number; minPointsBias: number };
  formulas: FormulaDef[];
}

export type Rounding = 'half-even' | 'half-away-from-zero';

export interface ReportingOptions {
  significantFigures: number;
  rounding: Rounding;
  /** The words for a result above the calibration range. */
  aboveRange: string;
  /** A sample result that carries an expanded uncertainty reads "x ± U" (qc/reported.ts); default false. */
  withUncertainty: boolean;
}
