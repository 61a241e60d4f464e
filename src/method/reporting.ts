import type { Method } from '../domain/method.js';

/**
 * What a method says about its calibration and its reported results, in the
 * words every output uses (`method check`, the Method sheet, Provenance).
 */
export function calibrationSentence(method: Method): string {
  return method.calibration.includesExtraction
    ? 'calibrators taken through the extraction (calibration.includes_extraction: true): the calibration carries the extraction losses, so no efficiency correction is applied; extraction_efficiency_pct is shown for information only'
    : 'standards not extracted (the default): pre_extraction_conc is corrected by the theoretical extraction efficiency E';
}

export function roundingWords(method: Method): string {
  return method.reporting.rounding === 'half-even' ? 'half to even (ISO 80000-1)' : 'half away from zero';
}

export function reportingSentence(method: Method): string {
  const r = method.reporting;
  return (
    `reported_result: ${r.significantFigures} significant figures, ties rounded ${roundingWords(method)}, ` +
    'from the value as a spreadsheet keeps it (15 significant digits); "< RL" with the reporting limit for a sample, duplicate or blank below it or not detected; ' +
    `"${r.aboveRange}" with the dilution that brings the extract into range above the calibration range` +
    (r.withUncertainty
      ? '; a sample result with an expanded uncertainty reads "x ± U", U to two significant figures and x to the same decimal place (GUM, JCGM 100:2008, 7.2.6)'
      : '')
  );
}
