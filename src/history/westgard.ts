/**
 * Westgard multirules over one control series in run order (Westgard, Barry,
 * Hunt, Groth, Clin. Chem. 1981, 27, 493–501; definitions as in REFERENCES.md §6).
 *
 * Choices made here, each stated once:
 * - "Beyond" a limit means strictly beyond: a value exactly at mean + 2s is not
 *   beyond +2s, and a value exactly at the mean is on neither side (10-x).
 * - Every rule is checked on its own at every point, and a violation is reported
 *   at the point that completes it. A window that keeps matching reports again
 *   at each new point (five consecutive values above +2s give 2-2s at the 2nd
 *   through the 5th), and a point beyond 3s gives both 1-3s and 1-2s.
 * - 2-2s, 4-1s and 10-x run across runs; R-4s looks only within one run (the
 *   point's `run`, else its `batchId`), at any two of its points, adjacent or not.
 * - NaN values (empty) are skipped: they are not points and break no sequence.
 * - Without usable limits (sd not above 0, or a non-finite mean) no rule can be
 *   judged and the result is empty.
 */

export type WestgardRule = '1-2s' | '1-3s' | '2-2s' | 'R-4s' | '4-1s' | '10-x';

/** What breaks each rule, in words (as README's table says it). */
export const WESTGARD_RULE_WORDS: Record<WestgardRule, string> = {
  '1-2s': 'one point beyond mean ± 2s',
  '1-3s': 'one point beyond mean ± 3s',
  '2-2s': 'two points in a row beyond the same 2s limit',
  'R-4s': 'within one batch of one run, one point beyond +2s and another beyond −2s',
  '4-1s': 'four points in a row beyond the same 1s limit',
  '10-x': 'ten points in a row on the same side of the mean',
};

export interface ControlPoint {
  value: number;
  batchId: string;
  /** Analytical run the point belongs to; default its batchId. */
  run?: string;
}

export interface ControlLimits {
  mean: number;
  sd: number;
}

export interface WestgardViolation {
  rule: WestgardRule;
  /** Index of the completing point in the input array. */
  index: number;
  batchId: string;
  value: number;
  severity: 'warning' | 'reject';
}

/** The non-empty points, in order, with what the rules need. */
interface Series {
  /** Position of each point in the input array. */
  index: number[];
  /** value − mean. */
  dev: number[];
  run: string[];
  /** Positions of each run's points, in order. */
  byRun: Map<string, number[]>;
  sd: number;
}

interface RuleDefinition {
  rule: WestgardRule;
  severity: 'warning' | 'reject';
  /** Whether the point at position k (into the series) completes a violation. */
  violatedAt(series: Series, k: number): boolean;
}

/** +1 beyond +limit·sd, −1 beyond −limit·sd, 0 otherwise (strictly). */
function side(series: Series, k: number, limit: number): -1 | 0 | 1 {
  const d = series.dev[k];
  const bound = limit * series.sd;
  return d > bound ? 1 : d < -bound ? -1 : 0;
}

/** The `count` points ending at k are all beyond the same ±limit·sd. */
function consecutiveBeyond(series: Series, k: number, count: number, limit: number): boolean {
  if (k < count - 1) return false;
  const s = side(series, k, limit);
  if (s === 0) return false;
  for (let j = k - count + 1; j < k; j++) if (side(series, j, limit) !== s) return false;
  return true;
}

const RULES: readonly RuleDefinition[] = [
  { rule: '1-2s', severity: 'warning', violatedAt: (s, k) => side(s, k, 2) !== 0 },
  { rule: '1-3s', severity: 'reject', violatedAt: (s, k) => side(s, k, 3) !== 0 },
  { rule: '2-2s', severity: 'reject', violatedAt: (s, k) => consecutiveBeyond(s, k, 2, 2) },
  {
    rule: 'R-4s',
    severity: 'reject',
    violatedAt: (s, k) => {
      const here = side(s, k, 2);
      if (here === 0) return false;
      for (const j of s.byRun.get(s.run[k])!) {
        if (j >= k) break;
        if (side(s, j, 2) === -here) return true;
      }
      return false;
    },
  },
  { rule: '4-1s', severity: 'reject', violatedAt: (s, k) => consecutiveBeyond(s, k, 4, 1) },
  { rule: '10-x', severity: 'reject', violatedAt: (s, k) => consecutiveBeyond(s, k, 10, 0) },
];

/** All rule violations in the series, ordered by point, then by the rule order above. */
export function westgard(points: readonly ControlPoint[], limits: ControlLimits): WestgardViolation[] {
  if (!(limits.sd > 0) || !Number.isFinite(limits.sd) || !Number.isFinite(limits.mean)) return [];
  const series: Series = { index: [], dev: [], run: [], byRun: new Map(), sd: limits.sd };
  points.forEach((p, i) => {
    if (Number.isNaN(p.value)) return;
    const run = p.run ?? p.batchId;
    const positions = series.byRun.get(run) ?? [];
    if (positions.length === 0) series.byRun.set(run, positions);
    positions.push(series.index.length);
    series.index.push(i);
    series.dev.push(p.value - limits.mean);
    series.run.push(run);
  });

  const violations: WestgardViolation[] = [];
  for (let k = 0; k < series.index.length; k++) {
    const point = points[series.index[k]];
    for (const def of RULES) {
      if (def.violatedAt(series, k)) {
        violations.push({
          rule: def.rule,
          index: series.index[k],
          batchId: point.batchId,
          value: point.value,
          severity: def.severity,
        });
      }
    }
  }
  return violations;
}
