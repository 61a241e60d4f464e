/**
 * The U a run's results carry when it comes from the QC history (issue 16): the run's own method's rows
 * of the 24 months up to the run, by the Nordtest route (figures.ts), and, for verify, the same
 * derivation over the points a workbook lists. The columns and the method's fixed U are qc/uncertainty.ts.
 */
import type { Method } from '../domain/method.js';
import type { HistoryRow } from '../history/records.js';
import { POINT_TYPES, type AnalyteUncertainty, type UncertaintyPoint } from '../qc/uncertainty.js';
import { computeFigures, defaultPeriod, rowsInPeriod, settingsOf } from './figures.js';
import { COVERAGE_K } from './nordtest.js';

/** The U per analyte that a run's history gives, from the rows of the run's method. */
export function uncertaintyFromHistory(
  rows: readonly HistoryRow[],
  options: { method: Method; until: string; historyFile: string },
): Map<string, AnalyteUncertainty> {
  const period = defaultPeriod(new Date(options.until));
  const own = rowsInPeriod(rows, period).filter((r) => r.methodName === options.method.name);
  const settings = new Map([[options.method.name, settingsOf(options.method, 'the method of this run')]]);
  const out = new Map<string, AnalyteUncertainty>();
  const span = `${period.since.slice(0, 10)} to ${period.until.slice(0, 10)}`;
  for (const e of computeFigures(own, settings)) {
    const u = e.uncertainty;
    let pct = NaN;
    let detail = '';
    if (Number.isFinite(u.expandedPct)) {
      pct = u.expandedPct;
      detail = `u(Rw) from ${u.nRw} lcs recoveries, bias from ${u.nBias} ms and msd recoveries`;
    } else {
      const levels = e.levels.filter((l) => Number.isFinite(l.uncertainty.expandedPct));
      if (levels.length > 0) {
        const worst = levels.reduce((a, b) => (b.uncertainty.expandedPct > a.uncertainty.expandedPct ? b : a));
        pct = worst.uncertainty.expandedPct;
        detail = `the largest of ${levels.length} qc level${levels.length === 1 ? '' : 's'}: ${worst.level}, from ${worst.uncertainty.nRw} recoveries`;
      }
    }
    if (!Number.isFinite(pct)) continue;
    const points = own
      .filter((r) => r.analyte === e.analyte && POINT_TYPES.has(r.sampleType) && Number.isFinite(r.recoveryPct))
      .map((r) => ({ sampleType: r.sampleType, qcLevel: r.qcLevel, recoveryPct: r.recoveryPct, runTime: r.runTime, worklistName: r.worklistName, batchId: r.batchId, sampleId: r.sampleId }));
    const cref = e.spikeUncertaintyStated ? `u(Cref) ${u.uCrefPct} %` : 'u(Cref) 0 % (none stated)';
    out.set(e.analyte.toLowerCase(), {
      analyte: e.analyte,
      pct,
      k: COVERAGE_K,
      origin: 'history',
      source: `Nordtest TR 537 from the QC history ${options.historyFile}, runs of ${span}: ${detail}; ${cref}`,
      history: { file: options.historyFile, until: options.until, points },
    });
  }
  return out;
}

/**
 * The U per analyte from the points a workbook lists (verify): the same derivation as
 * uncertaintyFromHistory, over history rows rebuilt from the points.
 */
export function uncertaintyFromPoints(
  points: ReadonlyArray<UncertaintyPoint & { analyte: string }>,
  options: { method: Method; until: string; historyFile: string },
): Map<string, AnalyteUncertainty> {
  const rows: HistoryRow[] = points.map((p, i) => ({
    ...p,
    runId: i + 1,
    worklistSha256: '',
    methodName: options.method.name,
    methodSha256: options.method.sha256,
    concentrationUnit: '',
    rowNumber: 0,
    rpdPct: NaN,
    status: 'pass',
    recoveryLow: NaN,
    recoveryHigh: NaN,
    flags: '',
    result: NaN,
    nondetect: undefined,
  }));
  return uncertaintyFromHistory(rows, options);
}
