/**
 * Results with their expanded uncertainty (issue 16, point 2): the U in percent that
 * applies to each analyte of a run, and the absolute U of every sample result.
 *
 * Where the U comes from, first that applies:
 * 1. the method states a fixed one for the analyte (`expanded_uncertainty_pct`, k = 2);
 * 2. the QC history given to `recalc --history`, as it stood before this run: the Nordtest
 *    figures (figures.ts) of the same method over the 24 months up to the run's time; the
 *    lcs and matrix spike route when it gives a U, else the largest U of the qc levels
 *    that give one (a sample's concentration is not tied to one level, so the least
 *    favourable level is the one that cannot understate it).
 * An analyte with neither has no U: its results carry none rather than a guess.
 *
 * A result's U is U % × |result| / 100, in the result's unit (the Nordtest U is relative:
 * TR 537 states it in percent over the working range).
 */
import type { HistoryRow } from '../history/records.js';
import type { Method } from '../domain/method.js';
import { computeFigures, defaultPeriod, rowsInPeriod, settingsOf } from './figures.js';
import { COVERAGE_K } from './nordtest.js';

export interface AnalyteUncertainty {
  /** The analyte as the method names it (or as the history recorded it). */
  analyte: string;
  /** Expanded uncertainty, percent of the result. */
  pct: number;
  k: number;
  origin: 'method' | 'history';
  /** Where it comes from, in words: the method, or the history with its period and point counts. */
  source: string;
  /** From the history: the file, the end of the period, and the recoveries it was derived from (run order). */
  history?: { file: string; until: string; points: UncertaintyPoint[] };
}

/** A recovery behind a U: what the workbook lists so that verify can derive the U again. */
export interface UncertaintyPoint {
  sampleType: string;
  qcLevel: string;
  recoveryPct: number;
  runTime: string;
  worklistName: string;
  batchId: string;
  sampleId: string;
}

/** The sample types whose recoveries a U is derived from. */
const POINT_TYPES = new Set(['lcs', 'ms', 'msd', 'qc']);

/** Per analyte, keyed by its name in lower case. */
export type UncertaintyTable = ReadonlyMap<string, AnalyteUncertainty>;

/** The column a result's U is computed from (DESIGN.md §4). */
export const RESULT_COLUMN = 'pre_extraction_conc';

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

/** The U per analyte for a run: the method's fixed ones over those from the history. */
export function uncertaintyTable(method: Method, fromHistory?: UncertaintyTable): Map<string, AnalyteUncertainty> {
  const out = new Map(fromHistory ?? []);
  for (const a of method.analytes) {
    if (a.expanded_uncertainty_pct === undefined) continue;
    out.set(a.name.toLowerCase(), {
      analyte: a.name,
      pct: a.expanded_uncertainty_pct,
      k: COVERAGE_K,
      origin: 'method',
      source: `stated by the method (analytes.${a.name}.expanded_uncertainty_pct)`,
    });
  }
  return out;
}

/**
 * The absolute U of every sample result (result's unit) and its k; NaN on other rows,
 * on a sample without a numerical result, and for an analyte without a U.
 */
export function expandedUncertaintyColumns(input: {
  rowCount: number;
  sampleType: readonly string[];
  analyte: readonly string[];
  surrogate: ArrayLike<number>;
  result: Float64Array;
  table: UncertaintyTable;
}): { expanded: Float64Array; k: Float64Array } {
  const expanded = new Float64Array(input.rowCount).fill(NaN);
  const k = new Float64Array(input.rowCount).fill(NaN);
  for (let r = 0; r < input.rowCount; r++) {
    if (input.sampleType[r] !== 'sample' || input.surrogate[r] === 1) continue;
    const x = input.result[r]!;
    const u = input.table.get(input.analyte[r]!.trim().toLowerCase());
    if (!u || !Number.isFinite(x)) continue;
    expanded[r] = (u.pct / 100) * Math.abs(x);
    k[r] = u.k;
  }
  return { expanded, k };
}
