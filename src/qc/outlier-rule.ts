import { pushTo } from '../group.js';
import { fmt, type Finding, type QcContext } from './context.js';
import { dixonTest, grubbsTest } from './outliers.js';

/** One test the method may choose (qc.outlier_test), as data: its name in words and how to run it. */
interface OutlierTestDef {
  label: string;
  run(values: number[], alpha: number): { index: number; statistic: number; critical: number; isOutlier: boolean | null } | null;
}

const OUTLIER_TESTS: Record<'grubbs' | 'dixon', OutlierTestDef> = {
  // Two-sided single-outlier test (NIST/SEMATECH e-Handbook §1.3.5.17.1), DESIGN.md §5.
  grubbs: { label: "Grubbs' G", run: (xs, alpha) => grubbsTest(xs, { alpha, sides: 2 }) },
  // Dixon's r10 with Rorabacher's (1991) critical values; no decision outside the table.
  dixon: { label: "Dixon's Q", run: (xs, alpha) => dixonTest(xs, { alpha }) },
};

/** Smallest group tested (DESIGN.md §5: n ≥ 3). */
export const MIN_OUTLIER_GROUP = 3;

/**
 * OUTLIER: the method's test over the recoveries of each (batch, analyte, sample
 * type, qc level) group of 3 or more; the farthest value is flagged when the
 * statistic exceeds the critical value. It informs and fails nothing by itself.
 */
export function findOutliers(ctx: QcContext): { outliers: Array<{ row: number; finding: Finding }>; undecided: Array<{ row: number; text: string }> } {
  const choice = ctx.method.qc.outlierTest;
  if (choice === 'none') return { outliers: [], undecided: [] };
  const test = OUTLIER_TESTS[choice];
  const alpha = ctx.method.qc.alpha;
  const groups = new Map<string, number[]>();
  for (let r = 0; r < ctx.rowCount; r++) {
    if (ctx.input.rowError[r] || !ctx.type[r] || !Number.isFinite(ctx.recovery[r]!)) continue;
    pushTo(groups, [ctx.batch[r], ctx.analyte[r], ctx.type[r], ctx.qcLevel[r]!.toLowerCase()].join('\u0000'), r);
  }
  const out: Array<{ row: number; finding: Finding }> = [];
  const undecided: Array<{ row: number; text: string }> = [];
  for (const rows of groups.values()) {
    if (rows.length < MIN_OUTLIER_GROUP) continue;
    const result = test.run(rows.map((r) => ctx.recovery[r]!), alpha);
    if (result && result.isOutlier === null) {
      // Dixon's table stops at n = 15 and has five α columns: say so rather than pass the group in silence.
      undecided.push({ row: rows[0]!, text: `${test.label} has no critical value for a group of ${rows.length} at α = ${alpha}: the recoveries of this group were not tested for an outlier` });
      continue;
    }
    if (!result?.isOutlier) continue;
    const row = rows[result.index]!;
    out.push({
      row,
      finding: {
        column: 'spike_recovery_pct',
        text: `recovery "${fmt(ctx.recovery[row]!)} %" is an outlier among ${rows.length} of its group (${test.label} ${fmt(result.statistic)} above the critical ${fmt(result.critical)} at α = ${alpha})`,
        value: result.statistic,
        limit: result.critical,
      },
    });
  }
  return { outliers: out, undecided };
}
