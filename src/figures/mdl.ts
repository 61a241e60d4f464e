/**
 * The method detection limit by 40 CFR Part 136 Appendix B, Revision 2 (EPA 821-R-16-006,
 * December 2016), from the low-level spiked blanks (`mdl` rows) and the method blanks a
 * lab runs anyway, over the last 24 months of ongoing use:
 *
 *   MDL_s = t(n − 1, 0.99) · S_s over at least seven spiked samples;
 *   MDL_b from the method blanks:
 *     none with a numerical result           → MDL_b does not apply;
 *     some, not all, numerical               → the highest blank result;
 *     all numerical                          → X̄ + t(n − 1, 0.99) · S_b, X̄ taken as 0 when negative;
 *     more than 100 blanks (either case)     → the blank of rank round(0.99 · n) in ascending order
 *                                              (the procedure's 99th percentile, §2(b)(iii)(B));
 *   MDL = the larger of MDL_s and MDL_b.
 *
 * A non-detect is not a numerical result. Seven blanks are the least the procedure
 * processes, so fewer give no MDL_b (and no MDL) rather than a guess. A spiked sample
 * that was not detected means the spike was too low: no MDL_s, and the message says so.
 * Values are sorted before they are summed, so the figure does not depend on the order
 * runs were recorded in.
 */
import { tQuantile } from '../qc/outliers.js';
import { mean, sampleSd } from '../qc/stats.js';

/** At least seven spiked samples and seven method blanks (Appendix B Rev. 2, §2(a) and (b)). */
export const MIN_MDL_SPIKES = 7;
export const MIN_MDL_BLANKS = 7;
/** Above this many blanks MDL_b is their 99th percentile. */
export const PERCENTILE_ABOVE = 100;

export type BlanksRule = 'not_applicable' | 'highest' | 'mean_plus_t_s' | 'percentile_99';

export interface MdlInputs {
  /** Numerical results of the `mdl` rows. */
  spikes: readonly number[];
  /** `mdl` rows reported as not detected. */
  spikesNotDetected: number;
  /** Numerical results of the method blanks (negative ones included). */
  blanks: readonly number[];
  /** Method blanks reported as not detected. */
  blanksNotDetected: number;
}

export interface Mdl {
  /** NaN when it cannot be computed. */
  mdlS: number;
  /** NaN when it does not apply or cannot be computed (see `blanksRule`). */
  mdlB: number;
  mdl: number;
  /** Spiked samples and method blanks, detected or not. */
  nSpikes: number;
  nBlanks: number;
  /** Which rule of §2(b)(iii) gave MDL_b; undefined when there were too few blanks. */
  blanksRule?: BlanksRule;
  /** Points still needed (0 when enough). */
  moreSpikes: number;
  moreBlanks: number;
  /** Why there is no MDL, in words; empty when there is one. */
  reasons: string[];
}

/** The one-sided Student t quantile at 99 % with n − 1 degrees of freedom. */
export function t99(n: number): number {
  return tQuantile(0.99, n - 1);
}

export function methodDetectionLimit(input: MdlInputs): Mdl {
  const spikes = sorted(input.spikes);
  const blanks = sorted(input.blanks);
  const nSpikes = spikes.length + input.spikesNotDetected;
  const nBlanks = blanks.length + input.blanksNotDetected;
  const reasons: string[] = [];

  let mdlS = NaN;
  const moreSpikes = Math.max(0, MIN_MDL_SPIKES - nSpikes);
  if (moreSpikes > 0) {
    reasons.push(`${moreSpikes} more low-level spiked blank${moreSpikes === 1 ? '' : 's'} (type mdl) needed: ${MIN_MDL_SPIKES} at least, ${nSpikes} recorded`);
  } else if (input.spikesNotDetected > 0) {
    reasons.push(`${input.spikesNotDetected} of ${nSpikes} low-level spiked blanks were not detected: the spike is too low for the procedure; spike higher`);
  } else {
    mdlS = t99(spikes.length) * sampleSd(spikes);
  }

  const blanksOut = mdlFromBlanks(blanks, input.blanksNotDetected);
  const moreBlanks = Math.max(0, MIN_MDL_BLANKS - nBlanks);
  if (moreBlanks > 0) reasons.push(`${moreBlanks} more method blank${moreBlanks === 1 ? '' : 's'} needed: ${MIN_MDL_BLANKS} at least, ${nBlanks} recorded with a result`);
  const mdlB = moreBlanks > 0 ? NaN : blanksOut.value;
  const blanksRule = moreBlanks > 0 ? undefined : blanksOut.rule;

  let mdl = NaN;
  if (Number.isFinite(mdlS) && blanksRule !== undefined) mdl = blanksRule === 'not_applicable' ? mdlS : Math.max(mdlS, mdlB);
  return { mdlS, mdlB, mdl, nSpikes, nBlanks, blanksRule, moreSpikes, moreBlanks, reasons };
}

/** MDL_b by §2(b)(iii) of the procedure, from the numerical blank results and the count of those not detected. */
export function mdlFromBlanks(results: readonly number[], notDetected: number): { value: number; rule: BlanksRule } {
  const blanks = sorted(results);
  const n = blanks.length + notDetected;
  if (blanks.length === 0) return { value: NaN, rule: 'not_applicable' };
  if (n > PERCENTILE_ABOVE) {
    // Rank round(0.99 · n) in ascending order, non-detects ranking lowest (they are below any result).
    const rank = Math.round(0.99 * n);
    const index = rank - 1 - notDetected;
    // The 99th percentile itself not detected: no numerical blank level to exceed.
    if (index < 0) return { value: NaN, rule: 'not_applicable' };
    return { value: blanks[index]!, rule: 'percentile_99' };
  }
  if (notDetected > 0) return { value: blanks[blanks.length - 1]!, rule: 'highest' };
  return { value: Math.max(0, mean(blanks)) + t99(blanks.length) * sampleSd(blanks), rule: 'mean_plus_t_s' };
}

function sorted(xs: readonly number[]): number[] {
  return xs.filter((x) => Number.isFinite(x)).sort((a, b) => a - b);
}
