import type { SampleType } from '../domain/fields.js';
import type { LimitTable, QcOptions, Range, ReportingOptions } from '../domain/method.js';

/**
 * Generic acceptance limits (DESIGN.md §5), used where a method names none.
 * 70–130 % recovery: US EPA SW-846 Method 3535A §1.2 default "recovery of 70–130 %, or project-specific".
 * ±15 % of nominal (±20 % at the LLOQ) for QC samples: FDA BMV 2018 / ICH M10 2022.
 * RPD ≤ 20 %: common practice for MS/MSD and duplicate pairs.
 */
export const GENERIC_LIMITS: LimitTable = {
  lcs: { recovery: [70, 130], rpd_max: 20 },
  lcsd: { recovery: [70, 130], rpd_max: 20 },
  ms: { recovery: [70, 130], rpd_max: 20 },
  msd: { recovery: [70, 130], rpd_max: 20 },
  dup: { rpd_max: 20 },
  qc: { recovery: [85, 115], levels: { lloq: { recovery: [80, 120] } } },
  surrogate: { recovery: [70, 130] },
};

/** ICH M10: at least 2/3 of all QC samples and at least 50 % at each level within limits. */
export const GENERIC_QC: QcOptions = {
  limitsSource: 'fixed',
  outlierTest: 'grubbs',
  alpha: 0.05,
  runRule: 'auto',
  runRuleAll: 2 / 3,
  runRulePerLevel: 0.5,
};

/**
 * Reporting: 3 significant figures (common practice), ties rounded half to even
 * (ISO 80000-1:2009 Annex B, from memory), "> range" above the calibration range,
 * a result without its expanded uncertainty.
 */
export const GENERIC_REPORTING: ReportingOptions = {
  significantFigures: 3,
  rounding: 'half-even',
  aboveRange: '> range',
  withUncertainty: false,
};

/**
 * Internal-standard response within 50–150 % of the mean response of the run's
 * calibrators and QCs: common practice in bioanalysis (no single published source).
 */
export const GENERIC_INTERNAL_STANDARD: { window: Range; reference: readonly SampleType[] } = {
  window: [50, 150],
  reference: ['calibrator', 'qc'],
};

/** Points the lab's own figures need (figures/nordtest.ts): 20 lcs recoveries for u(Rw), 6 matrix spikes for the bias (issue 16). */
export const DEFAULT_MIN_RW = 20;
export const DEFAULT_MIN_BIAS = 6;

/** The coverage factor of an expanded uncertainty: k = 2, about 95 % coverage (Nordtest TR 537; JCGM 100:2008 §6.3). */
export const COVERAGE_K = 2;
