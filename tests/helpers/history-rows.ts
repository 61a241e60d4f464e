import type { HistoryRow } from '../../src/history/records.js';

/**
 * An invented QC history row for the figures' tests; only what the figures read matters. A test
 * gives the sample type and analyte, and whatever else it needs (its run time, method, unit).
 */
export function historyRow(p: Partial<HistoryRow> & Pick<HistoryRow, 'sampleType' | 'analyte'>): HistoryRow {
  return {
    runId: 1,
    runTime: '2026-03-01T10:00:00.000Z',
    worklistName: 'w.csv',
    worklistSha256: 'a'.repeat(64),
    methodName: 'lab-method',
    methodSha256: 'b'.repeat(64),
    concentrationUnit: 'ug/L',
    rowNumber: 2,
    sampleId: 'X',
    batchId: 'B1',
    qcLevel: '',
    recoveryPct: NaN,
    rpdPct: NaN,
    status: 'pass',
    recoveryLow: NaN,
    recoveryHigh: NaN,
    flags: '',
    result: NaN,
    nondetect: false,
    ...p,
  };
}
