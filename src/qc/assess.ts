import type { SampleType } from '../columns/fields.js';
import { FAILING_CODES, rowMessage, type Flag, type FlagCode } from '../issues.js';
import type { Links } from '../engine/links.js';
import type { AnalyteInfo, Method } from '../method/types.js';
import { conversionFactor } from '../columns/units.js';
import { isAbove, isAtOrAbove, isBelow } from './compare.js';
import { formatRange, limitsFor, type AppliedLimits } from './limits.js';
import { dixonTest, grubbsTest } from './outliers.js';

/** What QC reads: finished columns, nothing else (it never reaches back). */
export interface QcInput {
  method: Method;
  rowCount: number;
  rowNumbers: Int32Array;
  sampleType: readonly (SampleType | '')[];
  analyteIndex: Int32Array;
  texts: ReadonlyMap<string, readonly string[]>;
  numbers: ReadonlyMap<string, Float64Array>;
  computed: ReadonlyMap<string, Float64Array>;
  links: Links;
  rowError: Uint8Array;
}

export type QcStatus = 'pass' | 'fail' | '';

export interface QcResult {
  /** QC flags (input errors are added by the pipeline), sorted by row. */
  flags: Flag[];
  status: QcStatus[];
  /** The limits that judged each row (for the QC sheet). */
  limits: AppliedLimits[];
  /** Run-rule outcome per batch and analyte where it applied. */
  runRule: RunRuleOutcome[];
}

export interface RunRuleOutcome {
  batch: string;
  analyte: string;
  accepted: boolean;
  passed: number;
  total: number;
  levels: Array<{ level: string; passed: number; total: number }>;
  reason?: string;
}

const NaNColumn = (n: number) => new Float64Array(n).fill(NaN);

/** Apply every QC rule of DESIGN.md §5 and derive each control's status. */
export function assessQc(input: QcInput): QcResult {
  const { method, rowCount: n } = input;
  const flags: Flag[] = [];
  const col = (name: string) => input.computed.get(name) ?? input.numbers.get(name) ?? NaNColumn(n);
  const recovery = col('spike_recovery_pct');
  // Calibration ranges are written in the extract unit; extract_conc is held in the sample unit.
  const rangeFactor = conversionFactor(method.units.extract_concentration, method.units.concentration);
  const rpd = col('rpd_pct');
  const conc = col('pre_extraction_conc');
  const extract = col('extract_conc');
  const rl = col('reporting_limit');
  const batch = input.texts.get('batch_id')!;
  const analyte = input.texts.get('analyte')!;
  const sampleId = input.texts.get('sample_id')!;
  const qcLevel = input.texts.get('qc_level')!;
  const analyteOf = (r: number): AnalyteInfo | undefined =>
    input.analyteIndex[r]! >= 0 ? method.analytes[input.analyteIndex[r]!] : undefined;
  const add = (row: number, code: FlagCode, column: string | undefined, text: string, value?: number, limit?: number | string) =>
    flags.push({ row, code, column, message: rowMessage(input.rowNumbers[row]!, column, text), value, limit });

  const limits: AppliedLimits[] = new Array(n);
  for (let r = 0; r < n; r++) {
    const type = input.sampleType[r];
    limits[r] = type ? limitsFor(method, { analyte: analyteOf(r), sampleType: type, qcLevel: qcLevel[r]! }) : { origin: 'none' };
    if (input.rowError[r] || !type) continue;
    const lim = limits[r]!;

    const rec = recovery[r]!;
    if (lim.recovery && Number.isFinite(rec)) {
      const [lo, hi] = lim.recovery;
      if (isBelow(rec, lo)) add(r, 'REC_LOW', 'spike_recovery_pct', `recovery ${fmt(rec)} % is below the limit ${formatRange(lim.recovery)}`, rec, lo);
      else if (isAbove(rec, hi)) add(r, 'REC_HIGH', 'spike_recovery_pct', `recovery ${fmt(rec)} % is above the limit ${formatRange(lim.recovery)}`, rec, hi);
    }
    const d = rpd[r]!;
    if (lim.rpdMax !== undefined && Number.isFinite(d) && isAbove(d, lim.rpdMax)) {
      add(r, 'RPD_HIGH', 'rpd_pct', `RPD ${fmt(d)} % is above the limit ${lim.rpdMax} %`, d, lim.rpdMax);
    }
    const limitRl = rl[r]!;
    if (type === 'blank' && Number.isFinite(conc[r]!) && Number.isFinite(limitRl) && isAtOrAbove(conc[r]!, limitRl)) {
      add(r, 'BLANK_HIT', 'pre_extraction_conc', `blank result ${fmt(conc[r]!)} is at or above the reporting limit ${fmt(limitRl)}`, conc[r], limitRl);
    }
    if (type === 'sample' && Number.isFinite(conc[r]!) && Number.isFinite(limitRl) && isBelow(conc[r]!, limitRl)) {
      add(r, 'BELOW_RL', 'pre_extraction_conc', `result ${fmt(conc[r]!)} is below the reporting limit ${fmt(limitRl)}`, conc[r], limitRl);
    }
    const range = analyteOf(r)?.calibration_range;
    if (range && Number.isFinite(extract[r]!) && isAbove(extract[r]! / rangeFactor, range[1])) {
      const shown = extract[r]! / rangeFactor;
      add(r, 'OVER_RANGE', 'extract_conc', `extract concentration ${fmt(shown)} ${method.units.extract_concentration} is above the calibration range ${range[0]}–${range[1]}`, shown, range[1]);
    }
    if (input.links.noParent[r]) {
      const pid = input.texts.get('parent_id')![r]!;
      add(r, 'NO_PARENT', 'parent_id', pid === '' ? `a ${type} row needs a parent_id naming its native sample` : `parent_id "${pid}" names no sample row of ${analyte[r]}`, undefined, undefined);
    }
  }

  // Statistical outliers among the recoveries of each (batch, analyte, type, qc level) group.
  if (method.qc.outlierTest !== 'none') {
    const groups = new Map<string, number[]>();
    for (let r = 0; r < n; r++) {
      if (input.rowError[r] || !input.sampleType[r] || !Number.isFinite(recovery[r]!)) continue;
      const k = [batch[r], analyte[r], input.sampleType[r], qcLevel[r]!.toLowerCase()].join('\u0000');
      const g = groups.get(k);
      if (g) g.push(r);
      else groups.set(k, [r]);
    }
    for (const rows of groups.values()) {
      if (rows.length < 3) continue;
      const values = rows.map((r) => recovery[r]!);
      const test =
        method.qc.outlierTest === 'dixon'
          ? dixonTest(values, { alpha: method.qc.alpha })
          : grubbsTest(values, { alpha: method.qc.alpha, sides: 2 });
      if (test?.isOutlier) {
        const r = rows[test.index]!;
        const name = method.qc.outlierTest === 'dixon' ? "Dixon's Q" : "Grubbs' G";
        add(r, 'OUTLIER', 'spike_recovery_pct', `recovery ${fmt(recovery[r]!)} % is an outlier among ${rows.length} (${name} ${fmt(test.statistic)} > ${fmt(test.critical)}, α = ${method.qc.alpha})`, test.statistic, test.critical);
      }
    }
  }

  // Status of each control row.
  const failed = new Uint8Array(n);
  for (const f of flags) if (FAILING_CODES.has(f.code)) failed[f.row] = 1;
  const status: QcStatus[] = new Array(n);
  for (let r = 0; r < n; r++) {
    const type = input.sampleType[r];
    if (type === 'sample') status[r] = '';
    else status[r] = failed[r] || input.rowError[r] || !type ? 'fail' : 'pass';
  }

  // Association: failed controls qualify the samples they stand for.
  const key = (r: number) => `${batch[r]}\u0000${analyte[r]}`;
  const lcsFailed = new Set<string>();
  const blankHit = new Set<string>();
  const matrixParents = new Set<number>();
  for (const f of flags) if (f.code === 'BLANK_HIT') blankHit.add(key(f.row));
  for (let r = 0; r < n; r++) {
    if (status[r] !== 'fail' || input.rowError[r]) continue;
    const type = input.sampleType[r];
    if (type === 'lcs' || type === 'lcsd') lcsFailed.add(key(r));
    if ((type === 'ms' || type === 'msd') && input.links.parentRow[r]! >= 0) matrixParents.add(input.links.parentRow[r]!);
  }
  for (let r = 0; r < n; r++) {
    if (input.sampleType[r] !== 'sample') continue;
    const k = key(r);
    if (lcsFailed.has(k)) add(r, 'LCS_ASSOC', undefined, `the batch's LCS for ${analyte[r]} failed`);
    if (matrixParents.has(r)) add(r, 'MATRIX_ASSOC', undefined, `a matrix spike of sample "${sampleId[r]}" failed`);
    if (blankHit.has(k)) add(r, 'BLANK_ASSOC', undefined, `the batch's blank for ${analyte[r]} is at or above the reporting limit`);
  }

  const runRule = method.qc.runRule === 'off' ? [] : applyRunRule(input, status, { batch, analyte, qcLevel });
  flags.sort((a, b) => a.row - b.row);
  return { flags, status, limits, runRule };
}

/**
 * Bioanalytical run acceptance (ICH M10; FDA BMV 2018): at least 2/3 of all QC
 * samples and at least 50 % at each concentration level within their limits.
 */
function applyRunRule(
  input: QcInput,
  status: QcStatus[],
  t: { batch: readonly string[]; analyte: readonly string[]; qcLevel: readonly string[] },
): RunRuleOutcome[] {
  const { runRuleAll, runRulePerLevel } = input.method.qc;
  const groups = new Map<string, number[]>();
  for (let r = 0; r < input.rowCount; r++) {
    if (input.sampleType[r] !== 'qc') continue;
    const k = `${t.batch[r]}\u0000${t.analyte[r]}`;
    const g = groups.get(k);
    if (g) g.push(r);
    else groups.set(k, [r]);
  }
  const out: RunRuleOutcome[] = [];
  for (const rows of groups.values()) {
    const passed = rows.filter((r) => status[r] === 'pass').length;
    const byLevel = new Map<string, { passed: number; total: number }>();
    for (const r of rows) {
      const lv = t.qcLevel[r]!.toLowerCase() || '(no level)';
      const e = byLevel.get(lv) ?? { passed: 0, total: 0 };
      e.total++;
      if (status[r] === 'pass') e.passed++;
      byLevel.set(lv, e);
    }
    const levels = [...byLevel].map(([level, e]) => ({ level, ...e }));
    const reasons: string[] = [];
    if (passed < runRuleAll * rows.length - 1e-9) reasons.push(`${passed} of ${rows.length} qc rows pass, fewer than ${fmtFraction(runRuleAll)}`);
    for (const lv of levels) {
      if (lv.passed < runRulePerLevel * lv.total - 1e-9) reasons.push(`${lv.passed} of ${lv.total} qc rows at level ${lv.level} pass, fewer than ${fmtFraction(runRulePerLevel)}`);
    }
    out.push({
      batch: t.batch[rows[0]!]!,
      analyte: t.analyte[rows[0]!]!,
      accepted: reasons.length === 0,
      passed,
      total: rows.length,
      levels,
      reason: reasons.length ? reasons.join('; ') : undefined,
    });
  }
  return out;
}

function fmtFraction(f: number): string {
  if (Math.abs(f - 2 / 3) < 1e-9) return '2/3';
  return `${Math.round(f * 1000) / 10} %`;
}

/** Numbers in messages: up to 4 significant figures, no exponent for ordinary sizes. */
export function fmt(x: number): string {
  if (!Number.isFinite(x)) return String(x);
  const a = Math.abs(x);
  if (a !== 0 && (a < 1e-4 || a >= 1e9)) return x.toExponential(3);
  return String(Number(x.toPrecision(4)));
}
