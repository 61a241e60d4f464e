import type { FlagCode } from '../issues.js';
import { isAbove, isAtOrAbove, isBelow } from './compare.js';
import { fmt, type Finding, type QcContext } from './context.js';
import { formatRange } from './limits.js';

/**
 * A QC rule that judges one row by itself (STYLE.md habit 6): its code, what it
 * checks in words, and the check. Which codes fail a control row is data too
 * (FAILING_CODES in issues.ts); nothing here switches on a rule's kind.
 * Rows with an input error or an unknown sample type are not judged.
 */
export interface RowRule {
  code: FlagCode;
  description: string;
  check(ctx: QcContext, row: number): Finding | undefined;
}

const finite = Number.isFinite;

export const ROW_RULES: readonly RowRule[] = [
  {
    code: 'REC_LOW',
    description: 'spike recovery below the lower limit for the row type (and qc level), limits inclusive',
    check(ctx, r) {
      const lim = ctx.limits[r]!.recovery;
      // A spiked control that is not detected has recovered nothing of its spike: it fails (issue 13).
      const spiked = ctx.isSurrogate(r) || ['lcs', 'lcsd', 'ms', 'msd', 'qc', 'mdl'].includes(ctx.type[r]!);
      if (lim && spiked && ctx.nondetect[r]) {
        return { column: 'spike_recovery_pct', text: `recovery below its limit: expected ${formatRange(lim)}, got a result not detected (nothing of the spike recovered)`, value: 0, limit: lim[0] };
      }
      const x = ctx.recovery[r]!;
      if (!lim || !finite(x) || !isBelow(x, lim[0])) return undefined;
      return { column: 'spike_recovery_pct', text: `recovery below its limit: expected ${formatRange(lim)}, got "${fmt(x)} %"`, value: x, limit: lim[0] };
    },
  },
  {
    code: 'REC_HIGH',
    description: 'spike recovery above the upper limit for the row type (and qc level), limits inclusive',
    check(ctx, r) {
      const lim = ctx.limits[r]!.recovery;
      const x = ctx.recovery[r]!;
      if (!lim || !finite(x) || !isAbove(x, lim[1])) return undefined;
      return { column: 'spike_recovery_pct', text: `recovery above its limit: expected ${formatRange(lim)}, got "${fmt(x)} %"`, value: x, limit: lim[1] };
    },
  },
  {
    code: 'RPD_HIGH',
    description: 'RPD of a pair (msd–ms, lcsd–lcs, dup–parent) above the maximum for the row type, limit inclusive',
    check(ctx, r) {
      const max = ctx.limits[r]!.rpdMax;
      const x = ctx.rpd[r]!;
      if (max === undefined || !finite(x) || !isAbove(x, max)) return undefined;
      return { column: 'rpd_pct', text: `RPD above its limit: expected at most ${max} %, got "${fmt(x)} %"`, value: x, limit: max };
    },
  },
  {
    code: 'BLANK_HIT',
    // A surrogate is spiked into every blank on purpose: its blank result is a recovery, not contamination.
    description: 'blank result at or above the reporting limit (row reporting_limit, else the analyte\'s, else the method default)',
    check(ctx, r) {
      if (ctx.type[r] !== 'blank' || ctx.isSurrogate(r)) return undefined;
      const x = ctx.result[r]!;
      const rl = ctx.reportingLimit[r]!;
      // The limit is the RL (environmental practice) or a part of it (bioanalysis: below 20 % of the LLOQ, ICH M10 §3.2.5).
      const fraction = ctx.limits[r]!.blankFraction ?? 1;
      const limit = rl * fraction;
      if (!finite(x) || !finite(limit) || !isAtOrAbove(x, limit)) return undefined;
      const u = ctx.method.units.concentration;
      const what = fraction === 1 ? 'the reporting limit' : `${fmt(fraction * 100)} % of the reporting limit ${fmt(rl)} ${u}`;
      return { column: 'pre_extraction_conc', text: `blank at or above ${what}: expected below ${fmt(limit)} ${u}, got "${fmt(x)} ${u}"`, value: x, limit };
    },
  },
  {
    code: 'BELOW_RL',
    description: 'sample result below the reporting limit',
    check(ctx, r) {
      if (ctx.type[r] !== 'sample' || ctx.isSurrogate(r)) return undefined;
      const x = ctx.result[r]!;
      const rl = ctx.reportingLimit[r]!;
      if (ctx.nondetect[r]) {
        // Not detected: below the reporting limit by what the instrument says, with no number to show.
        const u = ctx.method.units.concentration;
        return { column: 'pre_extraction_conc', text: `result not detected: below the reporting limit${finite(rl) ? ` ${fmt(rl)} ${u}` : ''}`, value: 'not detected', limit: finite(rl) ? rl : undefined };
      }
      if (!finite(x) || !finite(rl) || !isBelow(x, rl)) return undefined;
      const u = ctx.method.units.concentration;
      return { column: 'pre_extraction_conc', text: `result "${fmt(x)} ${u}" is below the reporting limit ${fmt(rl)} ${u}`, value: x, limit: rl };
    },
  },
  {
    code: 'OVER_RANGE',
    description: "extract concentration as measured above the top of the analyte's calibration range",
    check(ctx, r) {
      const range = ctx.analyteOf(r)?.calibration_range;
      const x = ctx.extract[r]! / ctx.extractUnitFactor;
      if (!range || !finite(x) || !isAbove(x, range[1])) return undefined;
      const u = ctx.method.units.extract_concentration;
      return { column: 'extract_conc', text: `extract concentration "${fmt(x)} ${u}" is above the calibration range ${range[0]}–${range[1]} ${u}`, value: x, limit: range[1] };
    },
  },
  {
    code: 'ISTD_RESPONSE',
    description: "internal-standard response outside the method's window (default 50–150 %) of the mean response of the batch and analyte's calibrators and qc rows, limits inclusive",
    check(ctx, r) {
      const x = ctx.istdResponse[r]!;
      const ref = ctx.istdReference[r]!;
      if (!finite(x) || !finite(ref) || ref <= 0) return undefined; // no response, or nothing to compare with (a note says so)
      const pct = (x / ref) * 100;
      const window = ctx.method.internalStandard.window;
      if (!isBelow(pct, window[0]) && !isAbove(pct, window[1])) return undefined;
      return {
        column: 'istd_response',
        text: `internal-standard response ${fmt(x)} is ${fmt(pct)} % of the mean ${fmt(ref)} of this batch's ${ctx.method.internalStandard.reference.join(' and ')} rows: expected ${formatRange(window)}`,
        value: pct,
        limit: formatRange(window),
      };
    },
  },
  {
    code: 'NO_PARENT',
    description: 'an ms, msd or dup whose parent_id names no sample row of its analyte; its recovery or RPD stays empty',
    check(ctx, r) {
      if (!ctx.input.links.noParent[r]) return undefined;
      const pid = ctx.parentId[r]!;
      const want = `a sample row of ${ctx.analyte[r]}`;
      const text = pid === '' ? `expected parent_id to name ${want}, got an empty cell` : `expected parent_id to name ${want}, got "${pid}"`;
      return { column: 'parent_id', text, value: pid };
    },
  },
];
