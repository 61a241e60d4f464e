/**
 * What a run contributes to the QC history: one record per control row (every
 * row whose qc_status is not empty, blanks included), and the facts of the run
 * that identify it (worklist and method SHA-256).
 */
import type { RecalcResult } from '../pipeline.js';

export interface RunRecord {
  /** ISO 8601 time of the run. */
  runTime: string;
  worklistName: string;
  worklistSha256: string;
  methodName: string;
  methodSha256: string;
  /** The method's concentration unit, in which every result of the run is recorded. */
  concentrationUnit: string;
}

export interface ControlRecord {
  /** 1-based spreadsheet row (header = row 1). */
  rowNumber: number;
  sampleId: string;
  batchId: string;
  analyte: string;
  sampleType: string;
  qcLevel: string;
  /** NaN when empty. */
  recoveryPct: number;
  /** NaN when empty. */
  rpdPct: number;
  status: 'pass' | 'fail';
  /** The recovery limits that judged the row; NaN when none applied. */
  recoveryLow: number;
  recoveryHigh: number;
  /** The row's flag codes, `;`-joined. */
  flags: string;
  /** pre_extraction_conc in the method's concentration unit; NaN when empty (a non-detect, an input error). */
  result: number;
  /** True when the instrument reported the row as not detected. */
  nondetect: boolean;
}

/** A control row read back from the history, with its run. */
export interface HistoryRow extends Omit<ControlRecord, 'nondetect'> {
  /** Position of the run in the file (1, 2, … in the order runs were recorded). */
  runId: number;
  runTime: string;
  worklistName: string;
  worklistSha256: string;
  methodName: string;
  methodSha256: string;
  /** '' for a run recorded before schema version 3. */
  concentrationUnit: string;
  /** undefined for a row recorded before schema version 3 (its result was not kept). */
  nondetect: boolean | undefined;
}

export function runRecord(result: RecalcResult, run: { timestamp: string }): RunRecord {
  return {
    runTime: run.timestamp,
    worklistName: result.worklist.name,
    worklistSha256: result.worklist.sha256,
    methodName: result.method.name,
    methodSha256: result.method.sha256,
    concentrationUnit: result.method.units.concentration,
  };
}

/** The control rows of a result, in worklist order. */
export function controlRecords(result: RecalcResult): ControlRecord[] {
  const n = result.rowsOut;
  const nan = new Float64Array(n).fill(NaN);
  const recovery = result.computed.get('spike_recovery_pct') ?? nan;
  const rpd = result.computed.get('rpd_pct') ?? nan;
  const conc = result.computed.get('pre_extraction_conc') ?? nan;
  const texts = result.table.texts;
  const text = (field: string, r: number) => texts.get(field)?.[r] ?? '';
  const out: ControlRecord[] = [];
  for (let r = 0; r < n; r++) {
    const status = result.qc.status[r];
    if (status !== 'pass' && status !== 'fail') continue;
    const limits = result.qc.limits[r]?.recovery;
    out.push({
      rowNumber: result.raw.rowNumbers[r]!,
      sampleId: text('sample_id', r),
      batchId: text('batch_id', r),
      analyte: text('analyte', r),
      sampleType: result.table.sampleType[r] ?? '',
      qcLevel: text('qc_level', r),
      recoveryPct: recovery[r]!,
      rpdPct: rpd[r]!,
      status,
      recoveryLow: limits ? limits[0] : NaN,
      recoveryHigh: limits ? limits[1] : NaN,
      flags: result.rowFlags[r] ?? '',
      result: conc[r]!,
      nondetect: result.table.nondetect[r] === 1,
    });
  }
  return out;
}
