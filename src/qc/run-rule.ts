import { rowsByBatchAnalyte, type QcContext } from './context.js';

export interface RunRuleOutcome {
  batch: string;
  analyte: string;
  accepted: boolean;
  passed: number;
  total: number;
  levels: Array<{ level: string; passed: number; total: number }>;
  /** Why the run was rejected, in words; absent when accepted. */
  reason?: string;
}

/** Level name used for qc rows that give none. */
export const NO_LEVEL = '(no level)';

/**
 * Bioanalytical run acceptance (ICH M10 2022, run acceptance in study sample analysis; FDA BMV 2018): at least 2/3
 * of all qc rows and at least 50 % of those at each concentration level pass.
 * Fractions come from the method (qc.run_rule_all, qc.run_rule_per_level).
 * Applied per (batch, analyte) wherever qc rows exist, unless the method turns it off.
 * A qc row with an input error cannot pass, so it counts against the run.
 */
export function applyRunRule(ctx: QcContext, passed: (row: number) => boolean): RunRuleOutcome[] {
  const { runRule, runRuleAll, runRulePerLevel } = ctx.method.qc;
  if (runRule === 'off') return [];
  const groups = rowsByBatchAnalyte(ctx, 'qc');
  const out: RunRuleOutcome[] = [];
  for (const rows of groups.values()) {
    const nPassed = rows.filter(passed).length;
    const byLevel = new Map<string, { passed: number; total: number }>();
    for (const r of rows) {
      const lv = ctx.qcLevel[r]!.toLowerCase() || NO_LEVEL;
      const e = byLevel.get(lv) ?? { passed: 0, total: 0 };
      e.total++;
      if (passed(r)) e.passed++;
      byLevel.set(lv, e);
    }
    const levels = [...byLevel].map(([level, e]) => ({ level, ...e }));
    const reasons: string[] = [];
    if (!atLeast(nPassed, rows.length, runRuleAll)) {
      reasons.push(`${nPassed} of ${rows.length} qc rows pass, fewer than ${fmtFraction(runRuleAll)}`);
    }
    for (const lv of levels) {
      if (!atLeast(lv.passed, lv.total, runRulePerLevel)) {
        reasons.push(`${lv.passed} of ${lv.total} qc rows at level ${lv.level} pass, fewer than ${fmtFraction(runRulePerLevel)}`);
      }
    }
    out.push({
      batch: ctx.batch[rows[0]!]!,
      analyte: ctx.analyte[rows[0]!]!,
      accepted: reasons.length === 0,
      passed: nPassed,
      total: rows.length,
      levels,
      reason: reasons.length ? reasons.join('; ') : undefined,
    });
  }
  return out;
}

/** passed ≥ fraction × total, with a little slack so binary noise in fraction × total never rejects an exact count. */
function atLeast(passed: number, total: number, fraction: number): boolean {
  return passed >= fraction * total - 1e-9;
}

function fmtFraction(f: number): string {
  if (Math.abs(f - 2 / 3) < 1e-9) return '2/3';
  return `${Math.round(f * 1000) / 10} %`;
}
