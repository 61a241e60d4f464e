/**
 * Trends across runs: per analyte and control type, the series of control
 * recoveries in run order, its in-house limits and the Westgard rule violations.
 *
 * Which points: every recorded control row of that analyte and sample type with
 * a recovery (blanks and duplicates carry none), from every run in the history,
 * in run order (run time, then the order the runs were recorded, then worklist
 * row). Each QC level is a series of its own (issue 14: a low QC and a high QC
 * are different controls), as is any control type whose rows carry a level. Limits use all of them, and only
 * from 20 points on (US EPA SW-846 Method 8000 practice; REFERENCES.md §2);
 * below that the series has mean and SD but no limits, and no rule is judged.
 * The rules run over the whole series against those limits.
 */
import { inHouseKey, type InHouseLimits } from '../qc/limits.js';
import { existsSync } from 'node:fs';
import { compareLevels, SAMPLE_TYPES } from '../domain/fields.js';
import type { RecalcResult } from '../pipeline.js';
import { inHouseLimits, type RecoveryLimits } from './inhouse-limits.js';
import { controlRecords, runRecord, type HistoryRow } from './records.js';
import { readHistory } from './store.js';
import { westgard, type WestgardRule, type WestgardViolation } from './westgard.js';

/** Points needed before limits are set and rules judged. */
export const MIN_POINTS = 20;

export interface TrendPoint {
  runId: number;
  runTime: string;
  worklistName: string;
  worklistSha256: string;
  batchId: string;
  sampleId: string;
  rowNumber: number;
  /** Recovery in percent. */
  value: number;
}

export interface TrendSeries {
  analyte: string;
  sampleType: string;
  /** The QC level (lower case; '' for a series without levels). */
  level: string;
  /** In run order. */
  points: TrendPoint[];
  limits: RecoveryLimits;
  /** Empty while the limits are not sufficient; `index` points into `points`. */
  violations: WestgardViolation[];
}

export interface TrendOptions {
  /** Points needed before limits are set and rules judged (default 20). */
  minPoints?: number;
}

/** The `--json` shape of one series. Limits are null below the minimum number of points. */
export interface TrendJson {
  analyte: string;
  sample_type: string;
  qc_level: string | null;
  n: number;
  mean: number | null;
  sd: number | null;
  warning_low: number | null;
  warning_high: number | null;
  control_low: number | null;
  control_high: number | null;
  rules: Array<{ rule: WestgardRule; run: number; run_time: string; worklist: string; batch_id: string; sample_id: string; row: number; qc_level: string | null; value: number }>;
}

/** What a series needs of a history row. */
export type TrendRow = Pick<
  HistoryRow,
  'runId' | 'runTime' | 'worklistName' | 'worklistSha256' | 'batchId' | 'sampleId' | 'rowNumber' | 'analyte' | 'sampleType' | 'qcLevel' | 'recoveryPct'
>;

/** A level as a series keys it: trimmed, lower case. */
export const levelKey = (level: string): string => level.trim().toLowerCase();

/**
 * Series per analyte and sample type from history rows (already in run order).
 * Also rebuilds the series from the points a workbook's Trends sheet lists (verify).
 */
export function buildTrends(rows: readonly TrendRow[], options: TrendOptions = {}): TrendSeries[] {
  const minPoints = options.minPoints ?? MIN_POINTS;
  const byKey = new Map<string, { analyte: string; sampleType: string; level: string; points: TrendPoint[] }>();
  for (const row of rows) {
    if (!Number.isFinite(row.recoveryPct)) continue;
    const level = levelKey(row.qcLevel);
    const key = `${row.analyte}\u0000${row.sampleType}\u0000${level}`;
    let s = byKey.get(key);
    if (!s) byKey.set(key, (s = { analyte: row.analyte, sampleType: row.sampleType, level, points: [] }));
    s.points.push({
      runId: row.runId,
      runTime: row.runTime,
      worklistName: row.worklistName,
      worklistSha256: row.worklistSha256,
      batchId: row.batchId,
      sampleId: row.sampleId,
      rowNumber: row.rowNumber,
      value: row.recoveryPct,
    });
  }
  const series: TrendSeries[] = [];
  for (const s of byKey.values()) {
    const limits = inHouseLimits(
      s.points.map((p) => p.value),
      { minPoints },
    );
    const violations = limits.sufficient
      ? westgard(
          // R-4s looks within one run: a batch of one recorded worklist.
          s.points.map((p) => ({ value: p.value, batchId: p.batchId, run: `${p.runId}\u0000${p.batchId}` })),
          { mean: limits.mean, sd: limits.sd },
        )
      : [];
    series.push({ ...s, limits, violations });
  }
  const typeRank = (t: string) => {
    const i = (SAMPLE_TYPES as readonly string[]).indexOf(t);
    return i < 0 ? SAMPLE_TYPES.length : i;
  };
  return series.sort((a, b) =>
    a.analyte < b.analyte
      ? -1
      : a.analyte > b.analyte
        ? 1
        : typeRank(a.sampleType) - typeRank(b.sampleType) || (a.sampleType < b.sampleType ? -1 : a.sampleType > b.sampleType ? 1 : compareLevels(a.level, b.level)),
  );
}

/** Read the history and build its series. */
export async function readTrends(historyPath: string, options: TrendOptions = {}): Promise<TrendSeries[]> {
  return buildTrends(await readHistory(historyPath), options);
}

/**
 * The series as they will be once this run is recorded, without writing anything:
 * the history (if the file exists) plus this run's controls, unless the same
 * worklist and method are already in it. For the report, which is written before
 * the run is recorded.
 */
export async function trendsIncludingRun(
  historyPath: string,
  result: RecalcResult,
  options: TrendOptions & { run: { timestamp: string } },
): Promise<TrendSeries[]> {
  return trendsWithRun(existsSync(historyPath) ? await readHistory(historyPath) : [], result, options);
}

/** trendsIncludingRun over rows already read (an open history session's). */
export function trendsWithRun(
  history: readonly HistoryRow[],
  result: RecalcResult,
  options: TrendOptions & { run: { timestamp: string } },
): TrendSeries[] {
  const rows = [...history];
  const run = runRecord(result, options.run);
  const recorded = rows.some((r) => r.worklistSha256 === run.worklistSha256 && r.methodSha256 === run.methodSha256);
  if (!recorded) {
    const runId = rows.reduce((m, r) => Math.max(m, r.runId), 0) + 1;
    const pending = controlRecords(result).map((c): HistoryRow => ({ ...c, ...run, runId }));
    // Keep run order: the pending run goes after every run with an earlier or equal time.
    const at = rows.findIndex((r) => r.runTime > run.runTime);
    rows.splice(at < 0 ? rows.length : at, 0, ...pending);
  }
  return buildTrends(rows, options);
}

/** The `--json` objects, with exactly the documented keys. */
export function trendsJson(series: readonly TrendSeries[]): TrendJson[] {
  return series.map((s) => {
    const ok = s.limits.sufficient;
    return {
      analyte: s.analyte,
      sample_type: s.sampleType,
      qc_level: s.level || null,
      n: s.limits.n,
      mean: finiteOrNull(s.limits.mean),
      sd: finiteOrNull(s.limits.sd),
      warning_low: ok ? finiteOrNull(s.limits.warningLow) : null,
      warning_high: ok ? finiteOrNull(s.limits.warningHigh) : null,
      control_low: ok ? finiteOrNull(s.limits.controlLow) : null,
      control_high: ok ? finiteOrNull(s.limits.controlHigh) : null,
      rules: s.violations.map((v) => {
        const p = s.points[v.index]!;
        return { rule: v.rule, run: p.runId, run_time: p.runTime, worklist: p.worklistName, batch_id: v.batchId, sample_id: p.sampleId, row: p.rowNumber, qc_level: s.level || null, value: v.value };
      }),
    };
  });
}

function finiteOrNull(x: number): number | null {
  return Number.isFinite(x) ? x : null;
}

/**
 * In-house recovery control limits (mean ± 3s) per analyte and control type, from
 * the series that hold enough points, for a method whose qc.limits is in_house.
 * A missing history file gives none (fixed limits then judge every control).
 */
export async function inHouseLimitsFrom(historyPath: string, options: TrendOptions = {}): Promise<InHouseLimits> {
  return inHouseLimitsOf(existsSync(historyPath) ? await readHistory(historyPath) : [], options);
}

/** inHouseLimitsFrom over rows already read (an open history session's). */
export function inHouseLimitsOf(rows: readonly HistoryRow[], options: TrendOptions = {}): InHouseLimits {
  const out = new Map<string, { low: number; high: number; n: number }>();
  for (const series of buildTrends(rows, options)) {
    const l = series.limits;
    if (l.sufficient) out.set(inHouseKey(series.analyte, series.sampleType, series.level), { low: l.controlLow, high: l.controlHigh, n: l.n });
  }
  return out;
}
