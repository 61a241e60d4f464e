/**
 * The Trends sheet: the QC history's series as `phasebook trends` prints them,
 * traceable cell by cell.
 *
 * - A series table, one row per analyte and control type: n, mean and SD as live
 *   formulas (COUNT, AVERAGE, STDEV) over that series' recoveries in the points
 *   table below, the warning (mean ± 2s) and control (mean ± 3s) limits as
 *   formulas over those, empty below the points needed for limits (a cell of this
 *   sheet); the engine's values cached. Then the Westgard rule violations.
 * - A points table: every recovery of every series, in run order, with its run,
 *   worklist (name and SHA-256), batch, sample and the rules it broke; a point
 *   that broke a rejection rule is marked as failing, one that broke only 1-2s as
 *   informing, each with a note naming the rules.
 *
 * Without a history the sheet says so and lists nothing. `verify` rebuilds the
 * series from the stored points, plans this sheet again and compares; the
 * integrity digest covers the points (digest.ts).
 */
import { groupBy } from '../../group.js';
import { basename } from 'node:path';
import type { RecalcResult } from '../../pipeline.js';
import { buildTrends, type TrendRow, type TrendSeries } from '../../history/trends.js';
import { WESTGARD_RULE_WORDS, type WestgardViolation } from '../../history/westgard.js';
import { SheetBuilder } from './builder.js';
import { cell, columnLetter, type CellValue, type PlannedCell, type SheetPlan, type SheetRows } from './cells.js';

export const TRENDS_SHEET = 'Trends';

export const TRENDS_KEYS = {
  history: 'QC history',
  minPoints: 'points needed for limits',
} as const;

/** Column B of the history line when the run was given no history. */
export const NO_HISTORY = 'none: this run was not given one (recalc --history FILE records runs and fills this sheet)';

export const SERIES_TITLE = 'Series: one per analyte, control type and QC level';
export const POINTS_TITLE = 'Points: every recovery of each series, in run order';

export const SERIES_HEADERS = [
  'analyte',
  'sample type',
  'qc level',
  'n',
  'mean %',
  'SD %',
  'warning low %',
  'warning high %',
  'control low %',
  'control high %',
  'rule violations',
  'rules broken',
  'points',
] as const;

export const POINT_HEADERS = [
  'analyte',
  'sample type',
  'qc level',
  'point',
  'run',
  'run time',
  'worklist',
  'worklist SHA-256',
  'batch',
  'sample_id',
  'worklist row',
  'recovery %',
  'this run',
  'rules broken here',
] as const;

/** 1-based column of the recovery in the points table (K). */
const RECOVERY_COLUMN = POINT_HEADERS.indexOf('recovery %') + 1;

export interface TrendsSheetInput {
  /** The history file as named on the command line (its base name is shown). */
  file: string;
  series: readonly TrendSeries[];
}

export interface TrendsSheet {
  plan: SheetPlan;
  /** The history line, the points-needed line and every points-table row, as values: the digest's tail. */
  digestRows: CellValue[][];
}

export function planTrendsSheet(result: RecalcResult, options: { history?: TrendsSheetInput; minPoints: number }): TrendsSheet {
  const { history, minPoints } = options;
  const b = new SheetBuilder();
  b.title('Trends: control recoveries across runs, from the QC history');
  const historyName = history ? basename(history.file) : NO_HISTORY;
  b.keyValue(TRENDS_KEYS.history, historyName);
  const minRow = b.keyValue(TRENDS_KEYS.minPoints, minPoints, [
    'below this many points a series has n, mean and SD but no limits, and no rule is judged (US EPA SW-846 Method 8000 practice)',
  ]);
  b.keyValue('which points', 'every recorded recovery of the analyte, control type and QC level, this run included, in run order (run time, then order recorded, then worklist row); all are used');
  b.keyValue('limits', 'warning: mean ± 2s; control: mean ± 3s; s the sample SD (n − 1)');
  b.keyValue(
    'rules',
    'Westgard multirules (Westgard et al., Clin. Chem. 1981) over each series against its limits: 1-2s (warning), 1-3s, 2-2s, R-4s (within one batch of one run), 4-1s, 10-x; "beyond" is strictly beyond',
  );
  const digestRows: CellValue[][] = [[TRENDS_KEYS.history, historyName], [TRENDS_KEYS.minPoints, minPoints]];
  b.blank();
  if (!history) {
    b.add([cell('No QC history: nothing to show.', { mark: 'note' })]);
    return { plan: finish(b), digestRows };
  }
  const series = history.series;
  if (series.length === 0) {
    b.add([cell('The history holds no control recoveries yet.', { mark: 'note' })]);
    return { plan: finish(b), digestRows };
  }

  // Rows from here: series title, its header, one row per series, a blank, the points title, its header, the points.
  const seriesHeaderRow = b.nextRow + 1;
  let nextPointRow = seriesHeaderRow + series.length + 4;
  const ranges = series.map((s) => {
    const first = nextPointRow;
    nextPointRow += s.points.length;
    return { first, last: nextPointRow - 1 };
  });

  b.title(SERIES_TITLE, 'section');
  b.table(
    SERIES_HEADERS,
    series.map((s, i) => seriesRow(s, { row: seriesHeaderRow + 1 + i, range: ranges[i]!, minRow })),
  );
  b.blank();
  b.title(POINTS_TITLE, 'section');
  const pointRows: (PlannedCell | CellValue)[][] = [];
  for (const s of series) {
    const byPoint = groupBy(s.violations, (v) => v.index);
    s.points.forEach((p, i) => {
      const values: CellValue[] = [
        s.analyte,
        s.sampleType,
        s.level || null,
        i + 1,
        p.runId,
        p.runTime,
        p.worklistName,
        p.worklistSha256,
        p.batchId || null,
        p.sampleId || null,
        p.rowNumber,
        p.value,
      ];
      digestRows.push(values);
      const broken = byPoint.get(i) ?? [];
      const reject = broken.some((v) => v.severity === 'reject');
      const recovery = cell(p.value, {
        numFmt: '0.0',
        ...(broken.length ? { mark: reject ? 'fail' : 'inform', note: `Breaks ${broken.map(describeViolation).join('; ')}` } : {}),
      });
      pointRows.push([
        ...values.slice(0, RECOVERY_COLUMN - 1),
        recovery,
        p.worklistSha256 === result.worklist.sha256 ? 'yes' : null,
        broken.length ? broken.map(ruleName).join(', ') : null,
      ]);
    });
  }
  b.table(POINT_HEADERS, pointRows);
  return { plan: finish(b), digestRows };
}

function seriesRow(s: TrendSeries, at: { row: number; range: { first: number; last: number }; minRow: number }): (PlannedCell | CellValue)[] {
  const l = s.limits;
  const r = at.row;
  const k = columnLetter(RECOVERY_COLUMN);
  const span = `${k}${at.range.first}:${k}${at.range.last}`;
  // The series table's own columns, by header: n, mean and SD.
  const [N, MEAN, SD] = (['n', 'mean %', 'SD %'] as const).map((h) => `${columnLetter(SERIES_HEADERS.indexOf(h) + 1)}${r}`);
  const enough = `${N}>=$B$${at.minRow}`;
  const live = (formula: string, value: number, shown: boolean): PlannedCell =>
    cell(shown && Number.isFinite(value) ? value : '', { formula, numFmt: '0.00' });
  const rejections = s.violations.filter((v) => v.severity === 'reject').length;
  return [
    s.analyte,
    s.sampleType || null,
    s.level || null,
    cell(l.n, { formula: `COUNT(${span})` }),
    live(`AVERAGE(${span})`, l.mean, true),
    live(`IF(${N}>=2,STDEV(${span}),"")`, l.sd, l.n >= 2),
    live(`IF(${enough},${MEAN}-2*${SD},"")`, l.warningLow, l.sufficient),
    live(`IF(${enough},${MEAN}+2*${SD},"")`, l.warningHigh, l.sufficient),
    live(`IF(${enough},${MEAN}-3*${SD},"")`, l.controlLow, l.sufficient),
    live(`IF(${enough},${MEAN}+3*${SD},"")`, l.controlHigh, l.sufficient),
    cell(s.violations.length, rejections > 0 ? { mark: 'fail' } : s.violations.length > 0 ? { mark: 'inform' } : {}),
    l.sufficient ? ruleCounts(s.violations) || 'none' : `no limits yet: ${l.n} of the points needed`,
    `rows ${at.range.first}–${at.range.last}`,
  ];
}

const ruleName = (v: WestgardViolation): string => (v.severity === 'warning' ? `${v.rule} (warning)` : v.rule);


function describeViolation(v: WestgardViolation): string {
  return `${ruleName(v)}: ${WESTGARD_RULE_WORDS[v.rule]}`;
}

/** "1-2s (warning) ×2, 2-2s ×1", in the order the rules were first broken. */
function ruleCounts(violations: readonly WestgardViolation[]): string {
  const counts = new Map<string, number>();
  for (const v of violations) counts.set(ruleName(v), (counts.get(ruleName(v)) ?? 0) + 1);
  return [...counts].map(([rule, n]) => `${rule} ×${n}`).join(', ');
}

function finish(b: SheetBuilder): SheetPlan {
  return b.plan(TRENDS_SHEET, { widths: [20, 12, 8, 20, 28, 22, 18, 14, 20, 12, 24, 28, 24] });
}

// ---- read back (verify): the history as this sheet holds it ----------------------------------
// The history's name, the points a series needs for limits, and every point, rebuilt into series so
// the sheet can be planned again and compared (its statistics, limits and rule violations must follow
// from its own points).

export interface StoredTrends {
  history?: TrendsSheetInput;
  minPoints: number;
  /** The rows the integrity digest takes, as stored. */
  digestRows: CellValue[][];
}

const POINT_VALUES = POINT_HEADERS.indexOf('recovery %') + 1;
/** Where each field of a point is in a stored row (by the points table's header, as the sheet writes it). */
const at = (header: (typeof POINT_HEADERS)[number]): number => POINT_HEADERS.indexOf(header);
const FIELD = {
  analyte: at('analyte'),
  sampleType: at('sample type'),
  qcLevel: at('qc level'),
  runId: at('run'),
  runTime: at('run time'),
  worklistName: at('worklist'),
  worklistSha256: at('worklist SHA-256'),
  batchId: at('batch'),
  sampleId: at('sample_id'),
  rowNumber: at('worklist row'),
  recoveryPct: at('recovery %'),
};

export function readTrendsSheet(sheet: SheetRows, options: { defaultMinPoints: number }): StoredTrends {
  let name: CellValue = null;
  let minPoints: CellValue = null;
  let pointsTitle = 0;
  for (let r = 1; r <= sheet.lastRow; r++) {
    const a = sheet.row(r).get(1)?.value;
    if (a === TRENDS_KEYS.history && name === null) name = sheet.row(r).get(2)?.value ?? null;
    else if (a === TRENDS_KEYS.minPoints && minPoints === null) minPoints = sheet.row(r).get(2)?.value ?? null;
    else if (a === POINTS_TITLE) pointsTitle = r;
  }
  const digestRows: CellValue[][] = [
    [TRENDS_KEYS.history, name],
    [TRENDS_KEYS.minPoints, minPoints],
  ];
  const min = typeof minPoints === 'number' && Number.isFinite(minPoints) ? minPoints : options.defaultMinPoints;
  if (name === null || name === NO_HISTORY) return { minPoints: min, digestRows };

  const rows: TrendRow[] = [];
  if (pointsTitle > 0) {
    for (let r = pointsTitle + 2; r <= sheet.lastRow; r++) {
      const cells = sheet.row(r);
      if (cells.size === 0) break;
      const v = Array.from({ length: POINT_VALUES }, (_, i) => cells.get(i + 1)?.value ?? null);
      digestRows.push(v);
      rows.push({
        analyte: text(v[FIELD.analyte]!),
        sampleType: text(v[FIELD.sampleType]!),
        qcLevel: text(v[FIELD.qcLevel]!),
        runId: number(v[FIELD.runId]!),
        runTime: text(v[FIELD.runTime]!),
        worklistName: text(v[FIELD.worklistName]!),
        worklistSha256: text(v[FIELD.worklistSha256]!),
        batchId: text(v[FIELD.batchId]!),
        sampleId: text(v[FIELD.sampleId]!),
        rowNumber: number(v[FIELD.rowNumber]!),
        recoveryPct: number(v[FIELD.recoveryPct]!),
      });
    }
  }
  return { history: { file: String(name), series: buildTrends(rows, { minPoints: min }) }, minPoints: min, digestRows };
}

const text = (v: CellValue): string => (v === null ? '' : String(v));
const number = (v: CellValue): number => (typeof v === 'number' ? v : Number.NaN);
