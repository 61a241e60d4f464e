import { FAILING_CODES, type Flag, type FlagCode, type Note } from '../issues.js';
import { associate } from './association.js';
import { buildContext, fmt, toFlag, type Finding, type QcContext, type QcInput } from './context.js';
import type { AppliedLimits } from './limits.js';
import { findOutliers } from './outlier-rule.js';
import { reportedResults } from './reported.js';
import { ROW_RULES } from './row-rules.js';
import { applyRunRule, type RunRuleOutcome } from './run-rule.js';

export type { QcInput } from './context.js';
export type { RunRuleOutcome } from './run-rule.js';
export { fmt } from './context.js';

export type QcStatus = 'pass' | 'fail' | '';

export interface QcResult {
  /** QC flags (input errors are added by the pipeline), sorted by row. */
  flags: Flag[];
  /**
   * Per row: '' on `sample` rows; on every other row 'fail' when a failing code
   * (FAILING_CODES) is on it, when it has an input error, or when its sample type
   * is unknown; 'pass' otherwise (OUTLIER, BELOW_RL and OVER_RANGE alone do not fail).
   */
  status: QcStatus[];
  /** The limits that judged each row (for the QC sheet). */
  limits: AppliedLimits[];
  /** Run-rule outcome per batch and analyte where it applied. */
  runRule: RunRuleOutcome[];
  /** Notes for the reviewer (e.g. an outlier group the method's test cannot decide); they change no status. */
  notes: Note[];
  /** Per row, the result as the lab reports it (qc/reported.ts); '' where there is none. */
  reported: string[];
}

/**
 * Apply every QC rule of DESIGN.md §5, in this order: the row rules (each row by
 * itself), the outlier test over groups, each control's status, the associations
 * a failed control puts on its samples, and the bioanalytical run rule.
 */
export function assessQc(input: QcInput): QcResult {
  const ctx = buildContext(input);
  const n = ctx.rowCount;
  const flags: Flag[] = [];
  const add = (row: number, code: FlagCode, f: Finding) => flags.push(toFlag(ctx, row, code, f));
  // What the OVER_RANGE rule found, by row: the reported result names the dilution from it.
  const overRange = new Map<number, Finding>();

  for (let r = 0; r < n; r++) {
    // Calibrators are carried, never judged.
    if (input.rowError[r] || !ctx.type[r] || ctx.type[r] === 'calibrator') continue;
    for (const rule of ROW_RULES) {
      const found = rule.check(ctx, r);
      if (!found) continue;
      add(r, rule.code, found);
      if (rule.code === 'OVER_RANGE') overRange.set(r, found);
    }
  }
  // A matrix spike or duplicate whose parent is not detected has no recovery or RPD to judge: never a silent
  // pass, the note says why (the native amount is unknown; US EPA CLP practice takes it as 0, which the lab may).
  const notJudged: Note[] = [];
  for (let r = 0; r < n; r++) {
    const t = ctx.type[r];
    if (input.rowError[r] || (t !== 'ms' && t !== 'msd' && t !== 'dup')) continue;
    const p = input.links.parentRow[r]!;
    if (p >= 0 && ctx.nondetect[p] && !(t === 'dup' && ctx.nondetect[r])) {
      notJudged.push({ row: r, column: t === 'dup' ? 'rpd_pct' : 'spike_recovery_pct', message: `not judged: its parent sample "${ctx.sampleId[p]}" is not detected, so its ${t === 'dup' ? 'RPD' : 'recovery'} cannot be computed` });
    } else if (t === 'dup' && p >= 0 && ctx.nondetect[r]) {
      notJudged.push({ row: r, column: 'rpd_pct', message: `not judged: this duplicate is not detected while its parent "${ctx.sampleId[p]}" is, so no RPD can be computed` });
    }
  }
  // A control with no limit to judge it by is never a silent pass: the note says it was not judged, and why.
  for (let r = 0; r < n; r++) {
    const t = ctx.type[r];
    if (input.rowError[r] || !t || t === 'sample' || t === 'calibrator') continue;
    const lim = ctx.limits[r]!;
    let why: string | undefined;
    if (t === 'blank' && !ctx.isSurrogate(r)) {
      if (!Number.isFinite(ctx.reportingLimit[r]!)) why = 'no reporting limit (give the row a reporting_limit, the analyte one, or the method defaults.reporting_limit)';
      else if (ctx.nondetect[r]) why = statedLimitTooHigh(ctx, r);
    } else if (t === 'dup') {
      if (lim.rpdMax === undefined) why = 'no RPD limit for dup rows (limits.dup.rpd_max)';
    } else if (!lim.recovery) {
      why = `no recovery limits for ${ctx.isSurrogate(r) ? 'this surrogate' : `${t} rows`} (limits.${ctx.isSurrogate(r) ? 'surrogate' : t}.recovery)`;
    }
    if (why) notJudged.push({ row: r, column: t === 'dup' ? 'rpd_pct' : t === 'blank' ? 'pre_extraction_conc' : 'spike_recovery_pct', message: `not judged: ${why}` });
  }
  // An internal-standard response with nothing to compare it with is not judged, and the note says so.
  for (let r = 0; r < n; r++) {
    const t = ctx.type[r];
    if (input.rowError[r] || !t || t === 'calibrator' || !Number.isFinite(ctx.istdResponse[r]!)) continue;
    const ref = ctx.istdReference[r]!;
    if (Number.isFinite(ref) && ref > 0) continue;
    const kinds = ctx.method.internalStandard.reference.join(' or ');
    notJudged.push({
      row: r,
      column: 'istd_response',
      message: Number.isFinite(ref)
        ? `internal-standard response not judged: the mean response of this batch's ${kinds} rows is 0`
        : `internal-standard response not judged: no ${kinds} row of this batch and analyte has a response to compare it with`,
    });
  }
  const outlierTest = findOutliers(ctx);
  for (const o of outlierTest.outliers) add(o.row, 'OUTLIER', o.finding);
  const notes: Note[] = [...notJudged, ...outlierTest.undecided.map((u) => ({ row: u.row, column: 'spike_recovery_pct', message: u.text }))];

  const failedByFlags = new Uint8Array(n);
  const codesOf: Array<Set<FlagCode> | undefined> = new Array(n);
  for (const f of flags) {
    if (FAILING_CODES.has(f.code)) failedByFlags[f.row] = 1;
    (codesOf[f.row] ??= new Set()).add(f.code);
  }
  const status: QcStatus[] = new Array(n);
  for (let r = 0; r < n; r++) {
    const type = ctx.type[r];
    // A row of unknown type cannot be shown to be a sample; it carries an input error and fails.
    if (type === 'sample' || type === 'calibrator') status[r] = '';
    else status[r] = failedByFlags[r] || input.rowError[r] || !type ? 'fail' : 'pass';
  }

  // Only a control that failed its QC qualifies samples; one with an input error was never judged.
  for (const a of associate(ctx, {
    failed: (r) => failedByFlags[r] === 1,
    hasFlag: (r, code) => codesOf[r]?.has(code) === true,
  })) {
    add(a.row, a.code, a.finding);
  }

  const runRule = applyRunRule(ctx, (r) => status[r] === 'pass');
  flags.sort((a, b) => a.row - b.row);
  return { flags, status, limits: ctx.limits, runRule, notes, reported: reportedResults(ctx, overRange) };
}

/**
 * A blank not detected "below 5" shows it clean only if 5, taken through the same mass balance as a
 * result, is below the blank's limit; otherwise the blank is not judged, and the words say why.
 */
function statedLimitTooHigh(ctx: QcContext, r: number): string | undefined {
  const stated = ctx.input.nondetectLimit?.[r];
  if (stated === undefined || !Number.isFinite(stated)) return undefined;
  const num = (name: string) => ctx.input.numbers.get(name)?.[r] ?? NaN;
  // Calibrators taken through the extraction: the stated limit is not corrected by the efficiency either.
  const e = ctx.method.calibration.includesExtraction ? 1 : (ctx.input.computed.get('extraction_efficiency_pct')?.[r] ?? NaN) / 100;
  const inSample = (stated * num('dilution') * num('final_volume')) / (num('sample_volume') * e);
  const limit = ctx.reportingLimit[r]! * (ctx.limits[r]!.blankFraction ?? 1);
  if (!Number.isFinite(inSample) || inSample < limit) return undefined;
  const u = ctx.method.units.concentration;
  return `not detected, but only below a stated limit of ${fmt(inSample)} ${u} in the sample, which is not below the blank's limit of ${fmt(limit)} ${u}`;
}
