/**
 * Measurement uncertainty from a lab's own control recoveries, by the Nordtest route:
 * Magnusson, Näykki, Hovind, Krysell, Koch, "Handbook for calculation of measurement
 * uncertainty in environmental laboratories", Nordtest Technical Report 537 (ed. 4, 2017).
 *
 *   u(Rw)   = s (n − 1) of the control sample recoveries, in percentage points
 *             (a recovery is already relative to its spike, so u(Rw) is relative too);
 *   u(bias) = √(RMS_bias² + u(Cref)²), RMS_bias = √(Σ(Rᵢ − 100)² / n) over recovery tests
 *             (here the matrix spikes, ms and msd), u(Cref) the spike's relative standard
 *             uncertainty as the method states it;
 *   u_c     = √(u(Rw)² + u(bias)²);  U = k · u_c with k = 2.
 *
 * A bioanalytical qc level is one control material measured many times: its bias is
 * its mean recovery − 100, and the handbook's case of one reference material adds the
 * standard error of that mean: u(bias) = √(bias² + (s/√n)² + u(Cref)²) (TR 537, bias
 * from one certified reference material; the formula from memory).
 *
 * Too few points give no number (NaN) and say how many more are needed. Values are
 * sorted before they are summed, so a figure does not depend on the order runs were
 * recorded in, to the last bit.
 */
import { mean, sampleSd } from '../qc/stats.js';


export interface UncertaintyOptions {
  /** Relative standard uncertainty of the spike, percent (default 0). */
  uCrefPct?: number;
  /** Points needed for u(Rw) (default 20). */
  minRw?: number;
  /** Points needed for the bias (default 6). */
  minBias?: number;
}

export interface Uncertainty {
  /** Percentage points; NaN below the minimum. */
  uRwPct: number;
  uBiasPct: number;
  ucPct: number;
  expandedPct: number;
  k: number;
  nRw: number;
  nBias: number;
  /** RMS of the biases (matrix spikes), or |mean − 100| of a qc level. */
  rmsBiasPct: number;
  uCrefPct: number;
  /** Points still needed (0 when enough). */
  moreRw: number;
  moreBias: number;
}

import { COVERAGE_K, DEFAULT_MIN_BIAS, DEFAULT_MIN_RW } from '../method/defaults.js';

export { COVERAGE_K, DEFAULT_MIN_BIAS, DEFAULT_MIN_RW };

/** The lcs route: u(Rw) from lcs recoveries, the bias from matrix spike recoveries (RMS). */
export function uncertaintyFromRecoveries(rw: readonly number[], bias: readonly number[], options: UncertaintyOptions = {}): Uncertainty {
  const { uCrefPct = 0, minRw = DEFAULT_MIN_RW, minBias = DEFAULT_MIN_BIAS } = options;
  const r = sorted(rw);
  const b = sorted(bias);
  const uRw = r.length >= minRw ? sampleSd(r) : NaN;
  const rms = b.length >= minBias ? rmsBias(b) : NaN;
  return combine({ uRw, rms, uCrefPct, nRw: r.length, nBias: b.length, minRw, minBias, extra: 0 });
}

/** One qc level: u(Rw) from its recoveries, the bias from their mean (one reference material). */
export function uncertaintyOfLevel(recoveries: readonly number[], options: UncertaintyOptions = {}): Uncertainty {
  const { uCrefPct = 0, minRw = DEFAULT_MIN_RW, minBias = DEFAULT_MIN_BIAS } = options;
  const r = sorted(recoveries);
  const s = sampleSd(r);
  const uRw = r.length >= minRw ? s : NaN;
  const enoughBias = r.length >= minBias;
  const rms = enoughBias ? Math.abs(mean(r) - 100) : NaN;
  // The standard error of the mean recovery, (s/√n)², goes into u(bias) with the bias itself.
  const extra = enoughBias ? (s * s) / r.length : NaN;
  return combine({ uRw, rms, uCrefPct, nRw: r.length, nBias: r.length, minRw, minBias, extra });
}

/** √(Σ(Rᵢ − 100)² / n): the root mean square of the biases, in percentage points. */
export function rmsBias(recoveries: readonly number[]): number {
  if (recoveries.length === 0) return NaN;
  let sum = 0;
  for (const x of recoveries) sum += (x - 100) * (x - 100);
  return Math.sqrt(sum / recoveries.length);
}

function combine(p: { uRw: number; rms: number; uCrefPct: number; nRw: number; nBias: number; minRw: number; minBias: number; extra: number }): Uncertainty {
  const uBias = Math.sqrt(p.rms * p.rms + p.extra + p.uCrefPct * p.uCrefPct);
  const uc = Math.sqrt(p.uRw * p.uRw + uBias * uBias);
  return {
    uRwPct: p.uRw,
    uBiasPct: uBias,
    ucPct: uc,
    expandedPct: COVERAGE_K * uc,
    k: COVERAGE_K,
    nRw: p.nRw,
    nBias: p.nBias,
    rmsBiasPct: p.rms,
    uCrefPct: p.uCrefPct,
    moreRw: Math.max(0, p.minRw - p.nRw),
    moreBias: Math.max(0, p.minBias - p.nBias),
  };
}

function sorted(xs: readonly number[]): number[] {
  return xs.filter((x) => Number.isFinite(x)).sort((a, b) => a - b);
}
