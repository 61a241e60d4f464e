/**
 * Single-outlier tests on a small group of replicate results: Grubbs' test and
 * Dixon's Q test (r10). Both look at one suspect value, the most extreme one.
 *
 * Input is a column as the engine holds it: non-finite entries (NaN = empty) are
 * skipped, and the reported `index` points into the array as given.
 *
 * `isOutlier` is true when the statistic is strictly above the critical value,
 * false when not, and null when no decision is possible because the critical
 * value is unknown (Dixon outside its table, or an alpha outside 0..1).
 */
import { createRequire } from 'node:module';

// The t quantile (@stdlib, some 350 modules) is loaded on first use, not at start-up.
const require = createRequire(import.meta.url);
let quantile: ((p: number, v: number) => number) | undefined;
/** The quantile of Student's t distribution with v degrees of freedom at probability p (also used by figures/mdl.ts). */
export function tQuantile(p: number, v: number): number {
  quantile ??= require('@stdlib/stats-base-dists-t-quantile') as (p: number, v: number) => number;
  return quantile(p, v);
}
import { mean, sampleSd } from './stats.js';

export interface GrubbsOptions {
  /** Significance level; default 0.05. */
  alpha?: number;
  /** 2 = two-sided test (default), 1 = one-sided. */
  sides?: 1 | 2;
  /**
   * One-sided test only: which end was suspected before looking, 'high' (the
   * largest value) or 'low' (the smallest). Default: the end farther from the
   * mean. Ignored by the two-sided test, which always takes the farther end.
   */
  direction?: 'high' | 'low';
}

export interface GrubbsResult {
  /** Number of finite values tested. */
  n: number;
  mean: number;
  /** Sample standard deviation (n − 1). */
  sd: number;
  /** G = |x_suspect − mean| / sd; 0 when sd is 0. */
  statistic: number;
  critical: number;
  /** Index in the input array of the suspect value. */
  index: number;
  isOutlier: boolean | null;
}

export interface DixonOptions {
  /** Significance level: 0.10, 0.05 (default), 0.04, 0.02 or 0.01. */
  alpha?: number;
}

export interface DixonResult {
  /** Number of finite values tested. */
  n: number;
  /** Q = gap / range; 0 when all values are equal. */
  statistic: number;
  /** From the table; NaN outside it. */
  critical: number;
  /** Index in the input array of the suspect value. */
  index: number;
  isOutlier: boolean | null;
}

/**
 * Grubbs' critical value G_c = ((n−1)/√n)·√(t²/(n−2+t²)), where t is the upper
 * t quantile with n−2 degrees of freedom at α/(2n) (two-sided) or α/n
 * (one-sided). NIST/SEMATECH e-Handbook §1.3.5.17.1; ASTM E178.
 * NaN for n < 3 or an alpha outside (0, 1).
 */
export function grubbsCritical(n: number, options: Omit<GrubbsOptions, 'direction'> = {}): number {
  const { alpha = 0.05, sides = 2 } = options;
  if (!Number.isInteger(n) || n < 3 || !(alpha > 0 && alpha < 1)) return NaN;
  const t = tQuantile(1 - alpha / (sides * n), n - 2);
  return ((n - 1) / Math.sqrt(n)) * Math.sqrt((t * t) / (n - 2 + t * t));
}

/**
 * Grubbs' test for one outlier. Null when fewer than 3 finite values.
 * When all values are equal (sd 0) nothing stands out: statistic 0, no outlier.
 */
export function grubbsTest(values: ArrayLike<number>, options: GrubbsOptions = {}): GrubbsResult | null {
  const { alpha = 0.05, sides = 2 } = options;
  const { xs, indices } = finiteValues(values);
  const n = xs.length;
  if (n < 3) return null;
  const m = mean(xs);
  const sd = sampleSd(xs);
  const critical = grubbsCritical(n, { alpha, sides });

  // The first of tied values wins.
  let lo = 0;
  let hi = 0;
  for (let i = 1; i < n; i++) {
    if (xs[i] < xs[lo]) lo = i;
    if (xs[i] > xs[hi]) hi = i;
  }
  const highGap = xs[hi] - m;
  const lowGap = m - xs[lo];
  const direction = sides === 1 && options.direction ? options.direction : highGap >= lowGap ? 'high' : 'low';
  const suspect = direction === 'high' ? hi : lo;
  const gap = direction === 'high' ? highGap : lowGap;

  const statistic = sd > 0 ? gap / sd : 0;
  return {
    n,
    mean: m,
    sd,
    statistic,
    critical,
    index: indices[suspect],
    isOutlier: decide(statistic, critical),
  };
}

/**
 * Critical values of Dixon's r10 (Q), Rorabacher, Anal. Chem. 1991, 63, 139–146,
 * by significance level, for n = 3, 4, ... . n = 3–10 at all five levels from
 * Rorabacher's table (as reprinted in Harvey, Analytical Chemistry 2.0, App. 6);
 * n = 11–15 at 0.10, 0.05 and 0.01 from a secondary reprint of the same table
 * (REFERENCES.md §5). The older Dean & Dixon (1951) values are not mixed in.
 */
const DIXON_R10: ReadonlyMap<number, readonly number[]> = new Map([
  [0.1, [0.941, 0.765, 0.642, 0.56, 0.507, 0.468, 0.437, 0.412, 0.392, 0.376, 0.361, 0.349, 0.338]],
  [0.05, [0.97, 0.829, 0.71, 0.625, 0.568, 0.526, 0.493, 0.466, 0.444, 0.426, 0.41, 0.396, 0.384]],
  [0.04, [0.976, 0.846, 0.729, 0.644, 0.586, 0.543, 0.51, 0.483]],
  [0.02, [0.988, 0.889, 0.78, 0.698, 0.637, 0.59, 0.555, 0.527]],
  [0.01, [0.994, 0.926, 0.821, 0.74, 0.68, 0.634, 0.598, 0.568, 0.542, 0.522, 0.503, 0.488, 0.475]],
]);

/** Dixon's Q critical value for n values; NaN where the table has no entry. */
export function dixonCritical(n: number, options: DixonOptions = {}): number {
  const { alpha = 0.05 } = options;
  const column = DIXON_R10.get(alpha);
  if (!column || !Number.isInteger(n) || n < 3) return NaN;
  return column[n - 3] ?? NaN;
}

/**
 * Dixon's Q test (r10): Q = |x_suspect − x_nearest| / (x_max − x_min), the
 * suspect being whichever extreme has the larger gap to its neighbour (the high
 * end on a tie). Null when fewer than 3 finite values.
 */
export function dixonTest(values: ArrayLike<number>, options: DixonOptions = {}): DixonResult | null {
  const { xs, indices } = finiteValues(values);
  const n = xs.length;
  if (n < 3) return null;
  // Sort positions by value, ties by original position, so the first of tied extremes is reported.
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => xs[a] - xs[b] || a - b);
  const first = xs[order[0]];
  const last = xs[order[n - 1]];
  const lowGap = xs[order[1]] - first;
  const highGap = last - xs[order[n - 2]];
  const range = last - first;
  const suspect = highGap >= lowGap ? order.findIndex((p) => xs[p] === last) : 0;
  const statistic = range > 0 ? Math.max(lowGap, highGap) / range : 0;
  const critical = dixonCritical(n, options);
  return { n, statistic, critical, index: indices[order[suspect]], isOutlier: decide(statistic, critical) };
}

function decide(statistic: number, critical: number): boolean | null {
  return Number.isNaN(critical) ? null : statistic > critical;
}

function finiteValues(values: ArrayLike<number>): { xs: number[]; indices: number[] } {
  const xs: number[] = [];
  const indices: number[] = [];
  for (let i = 0; i < values.length; i++) {
    if (Number.isFinite(values[i])) {
      xs.push(values[i]);
      indices.push(i);
    }
  }
  return { xs, indices };
}
