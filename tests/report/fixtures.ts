/**
 * Invented worklists for the history, trends and report tests (demo data, no real lab).
 *
 * With the generic method, sample_volume 100 mL, final_volume 1 mL, no partition
 * coefficient (E = 100 %) and spike_conc 1 ng/mL, a control's recovery in percent
 * equals its extract_conc: pre = C·V_final/V_aq = C/100 ng/mL, and
 * recovery = pre/spike × 100 = C (DESIGN.md §4 formulas).
 */
import { copyFileSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { recordRun } from '../../src/history/store.js';
import { trendsIncludingRun, type TrendSeries } from '../../src/history/trends.js';
import { recalculate, type RecalcResult } from '../../src/pipeline.js';
import type { RecoveryPoint } from '../../src/report/charts.js';

export const GENERIC_METHOD = resolve('templates/generic-lle.yaml');

const HEADER = 'sample_id,sample_type,parent_id,batch_id,analyte,extract_conc,sample_volume,solvent_volume,extractions,final_volume,spike_conc';

export interface ControlRow {
  sampleId: string;
  type: 'blank' | 'lcs' | 'lcsd' | 'sample' | 'ms' | 'msd' | 'dup';
  parent?: string;
  batch: string;
  analyte: string;
  /** For controls: the recovery in percent (see the file comment); for samples and blanks: the extract result. */
  value: number;
}

function csvCell(text: string): string {
  return /[",\n\r]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

export function worklistText(rows: readonly ControlRow[]): string {
  const lines = rows.map((r) => {
    const spiked = r.type !== 'sample' && r.type !== 'blank' && r.type !== 'dup';
    return [r.sampleId, r.type, r.parent ?? '', r.batch, r.analyte, String(r.value), '100', '10', '1', '1', spiked ? '1' : '']
      .map(csvCell)
      .join(',');
  });
  return [HEADER, ...lines].join('\n') + '\n';
}

/** Write a worklist and recalculate it with the generic method. */
export async function recalcRows(dir: string, name: string, rows: readonly ControlRow[]): Promise<RecalcResult> {
  const path = join(dir, name);
  writeFileSync(path, worklistText(rows));
  return recalculate(path, { method: GENERIC_METHOD });
}

/** One run of batch `B<i>`: a blank, an LCS with the given recovery, and a sample. */
export function lcsRun(i: number, recovery: number, analyte = 'Atrazine'): ControlRow[] {
  const batch = `B${i}`;
  return [
    { sampleId: `${batch}-BLK`, type: 'blank', batch, analyte, value: 0.001 },
    { sampleId: `${batch}-LCS`, type: 'lcs', batch, analyte, value: recovery },
    { sampleId: `${batch}-S1`, type: 'sample', batch, analyte, value: 20 },
  ];
}

/** Run time of the i-th run: one day apart from 2026-01-01, 10:00 UTC. */
export function runTime(i: number): string {
  return new Date(Date.UTC(2026, 0, i, 10)).toISOString();
}

/**
 * The 20 LCS recoveries of REFERENCES.md §2 ("Constructed numeric checks"):
 * mean 98.40, s (n − 1) 3.8580, LCL 86.83, LWL 90.68, UWL 106.12, UCL 109.97.
 */
export const REFERENCE_LCS = [95, 102, 98, 91, 105, 99, 97, 100, 94, 103, 96, 101, 99, 92, 104, 98, 100, 97, 95, 102];

export const REPORT_RUN = { timestamp: '2026-01-22T10:00:00.000Z', command: 'phasebook recalc current.csv', version: '0.1.0' };
export const EVIL_SAMPLE = '<script>alert(1)</script>';
export const EVIL_ANALYTE = 'Atra<b>zine</b> & "co" \'x\'';
export const EVIL_BATCH = 'B"><img src=x onerror=alert(2)>';

/**
 * A history of 21 runs (REFERENCE_LCS, then an LCS at 112 % in B21) and a current
 * worklist of two batches: B22 (LCS 113 %, LCSD 140 % → REC_HIGH, MS 90 %) and a
 * batch whose ids and analyte are hostile HTML. `history` holds the series as they
 * are once the current run is recorded.
 */
export async function reportScenario(dir: string): Promise<{ current: RecalcResult; history: TrendSeries[]; historyFile: string }> {
  const historyFile = join(dir, 'history.db');
  for (let i = 1; i <= 20; i++) {
    await recordRun(historyFile, await recalcRows(dir, `run-${i}.csv`, lcsRun(i, REFERENCE_LCS[i - 1]!)), { timestamp: runTime(i) });
  }
  await recordRun(historyFile, await recalcRows(dir, 'run-21.csv', lcsRun(21, 112)), { timestamp: runTime(21) });
  const rows: ControlRow[] = [
    ...lcsRun(22, 113),
    { sampleId: 'B22-LCSD', type: 'lcsd', parent: 'B22-LCS', batch: 'B22', analyte: 'Atrazine', value: 140 },
    // MS recovery = (C − C_parent)/spike × 100 = (110/100 − 20/100)/1 × 100 = 90 % with the fixture volumes.
    { sampleId: 'B22-MS', type: 'ms', parent: 'B22-S1', batch: 'B22', analyte: 'Atrazine', value: 110 },
    { sampleId: EVIL_SAMPLE, type: 'lcs', batch: EVIL_BATCH, analyte: EVIL_ANALYTE, value: 99 },
    { sampleId: 'X-S1', type: 'sample', batch: EVIL_BATCH, analyte: EVIL_ANALYTE, value: 5 },
  ];
  const current = await recalcRows(dir, 'current.csv', rows);
  const history = await trendsIncludingRun(historyFile, current, { run: REPORT_RUN });
  return { current, history, historyFile };
}

/**
 * Invented control recoveries for chart tests: `count` controls, the last without
 * limits, values moved by `shift`; with `longLabels`, labels long enough to be cut.
 */
export function inventedRecoveries(count: number, shift: number, options: { longLabels?: boolean } = {}): RecoveryPoint[] {
  return Array.from({ length: count }, (_, i) => ({
    label: options.longLabels ? `control sample number ${i + 1}` : `C${i + 1}`,
    sampleId: `S-${shift}-${i}`,
    sampleType: i % 2 ? 'lcs' : 'ms',
    rowNumber: i + 2,
    value: 62 + 11 * i + shift,
    low: i === count - 1 ? Number.NaN : 70,
    high: i === count - 1 ? Number.NaN : 130,
  }));
}

/**
 * Three QC histories in `dir`: `twenty` (20 runs, LCS recoveries REFERENCE_LCS in run order), `twentyTwo`
 * (the same, then two more at 112 and 113 %) and `nineteen` (the first 19 runs only).
 */
export async function lcsHistories(dir: string): Promise<{ nineteen: string; twenty: string; twentyTwo: string }> {
  const nineteen = join(dir, 'nineteen.db');
  const twenty = join(dir, 'twenty.db');
  const twentyTwo = join(dir, 'twenty-two.db');
  for (let i = 1; i <= 20; i++) {
    const result = await recalcRows(dir, `run-${i}.csv`, lcsRun(i, REFERENCE_LCS[i - 1]!));
    if (i === 20) copyFileSync(twenty, nineteen);
    await recordRun(twenty, result, { timestamp: runTime(i) });
  }
  copyFileSync(twenty, twentyTwo);
  for (const [i, rec] of [[21, 112], [22, 113]] as const) {
    await recordRun(twentyTwo, await recalcRows(dir, `run-${i}.csv`, lcsRun(i, rec)), { timestamp: runTime(i) });
  }
  return { nineteen, twenty, twentyTwo };
}
