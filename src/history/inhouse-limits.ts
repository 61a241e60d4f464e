/**
 * In-house control limits derived from a lab's own QC history.
 *
 * Accuracy (recovery): warning limits mean ± 2s, control limits mean ± 3s, s the
 * sample standard deviation of the recoveries (US EPA SW-846 Method 8000 practice;
 * county QA plans cited in REFERENCES.md §2 ask for at least 20 points).
 * Precision (RPD): one-sided, from 0 up to mean + 2s (warning) and mean + 3s
 * (control), since a smaller RPD is never a problem.
 *
 * NaN entries (empty) are skipped. Limits are NaN when fewer than two values;
 * `sufficient` says whether there were enough points to trust them.
 */
import { mean, sampleSd } from '../qc/stats.js';

export interface LimitOptions {
  /** Points needed before the limits are considered sufficient; default 20 (never fewer than 2). */
  minPoints?: number;
}

export interface RecoveryLimits {
  n: number;
  mean: number;
  sd: number;
  warningLow: number;
  warningHigh: number;
  controlLow: number;
  controlHigh: number;
  sufficient: boolean;
}

export interface RpdLimits {
  n: number;
  mean: number;
  sd: number;
  /** Upper warning limit, mean + 2s. */
  warning: number;
  /** Upper control limit, mean + 3s. */
  control: number;
  sufficient: boolean;
}

/** Warning (± 2s) and control (± 3s) limits for recoveries in percent. */
export function inHouseLimits(recoveries: ArrayLike<number>, options: LimitOptions = {}): RecoveryLimits {
  const { n, m, s, sufficient } = describe(recoveries, options);
  return {
    n,
    mean: m,
    sd: s,
    warningLow: m - 2 * s,
    warningHigh: m + 2 * s,
    controlLow: m - 3 * s,
    controlHigh: m + 3 * s,
    sufficient,
  };
}

/** One-sided upper warning (+ 2s) and control (+ 3s) limits for RPDs in percent. */
export function rpdLimits(rpds: ArrayLike<number>, options: LimitOptions = {}): RpdLimits {
  const { n, m, s, sufficient } = describe(rpds, options);
  return { n, mean: m, sd: s, warning: m + 2 * s, control: m + 3 * s, sufficient };
}

function describe(xs: ArrayLike<number>, options: LimitOptions) {
  const { minPoints = 20 } = options;
  let n = 0;
  for (let i = 0; i < xs.length; i++) if (!Number.isNaN(xs[i])) n++;
  return { n, m: mean(xs), s: sampleSd(xs), sufficient: n >= Math.max(minPoints, 2) };
}
