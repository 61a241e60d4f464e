/**
 * The QC history as a workbook's Trends sheet holds it: the history's name, the
 * points a series needs for limits, and every point, rebuilt into series so the
 * sheet can be planned again and compared (its statistics, limits and rule
 * violations must follow from its own points).
 */
import { buildTrends, type TrendRow } from '../history/trends.js';
import type { CellValue } from '../write/workbook/cells.js';
import { NO_HISTORY, POINTS_TITLE, POINT_HEADERS, TRENDS_KEYS, type TrendsSheetInput } from '../write/workbook/trends-sheet.js';
import type { StoredSheet } from './read.js';

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

export function storedTrends(sheet: StoredSheet, options: { defaultMinPoints: number }): StoredTrends {
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
