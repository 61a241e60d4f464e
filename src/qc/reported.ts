import { Decimal } from 'decimal.js';
import type { Rounding } from '../domain/method.js';
import { isBelow } from './compare.js';
import { fmt, type Finding, type QcContext } from './context.js';

/**
 * The result as a lab reports it (DESIGN.md §4, `reported_result`), one text per
 * row, in the method's concentration unit:
 * - a sample, duplicate or blank below its reporting limit, or not detected:
 *   `< RL` with the limit ("< 0.1"); not detected with no limit known: "not detected";
 * - any row whose extract is above the calibration range (the OVER_RANGE rule's findings, given):
 *   the method's words ("> range") and the whole dilution that brings the extract
 *   into range ("> range (needs dilution ≥ 3)");
 * - otherwise the pre-extraction concentration rounded to the method's significant
 *   figures, trailing zeros kept ("0.0500", "153", "15200");
 * - when the method asks for it (`reporting.with_uncertainty`), a result that carries an
 *   expanded uncertainty U reads "x ± U" (withUncertainty below) instead;
 * - empty where there is no result (input error, calibrator, unknown type).
 * Spiked controls (lcs, ms, qc, surrogates …) report their number even below the
 * RL: their recovery is what is judged (common practice).
 */
export function reportedResults(ctx: QcContext, overRange: ReadonlyMap<number, Finding>): string[] {
  const { significantFigures: sig, rounding, aboveRange, withUncertainty: plusMinus } = ctx.method.reporting;
  const expanded = plusMinus ? ctx.input.expandedUncertainty : undefined;
  const dilution = ctx.input.numbers.get('dilution');
  const out = new Array<string>(ctx.rowCount).fill('');
  for (let r = 0; r < ctx.rowCount; r++) {
    const t = ctx.type[r];
    if (ctx.input.rowError[r] || !t || t === 'calibrator') continue;
    const over = overRange.get(r);
    if (over && typeof over.value === 'number' && typeof over.limit === 'number') {
      const d = dilution && Number.isFinite(dilution[r]!) ? dilution[r]! : 1;
      out[r] = `${aboveRange} (needs dilution ≥ ${dilutionToRange(d, over.value, over.limit)})`;
      continue;
    }
    const censored = (t === 'sample' || t === 'dup' || t === 'blank') && !ctx.isSurrogate(r);
    const rl = ctx.reportingLimit[r]!;
    const x = ctx.result[r]!;
    if (ctx.nondetect[r]) {
      out[r] = Number.isFinite(rl) ? `< ${fmt(rl)}` : 'not detected';
    } else if (censored && Number.isFinite(rl) && Number.isFinite(x) && isBelow(x, rl)) {
      // Below the RL as every rule compares (qc/compare.ts): a result on the limit is reported, not censored.
      out[r] = `< ${fmt(rl)}`;
    } else if (Number.isFinite(x)) {
      const u = expanded ? expanded[r]! : NaN;
      out[r] = u > 0 && Number.isFinite(u) ? withUncertainty(x, u, rounding) : roundToSignificant(x, sig, rounding);
    }
  }
  return out;
}

/**
 * The smallest whole dilution factor that brings an extract into range: the
 * dilution used × extract / top of the range, rounded up (a ratio a hair above
 * a whole number from floating point stays that number).
 */
export function dilutionToRange(dilution: number, extract: number, top: number): number {
  const need = (dilution * extract) / top;
  const whole = Math.round(need);
  return Math.abs(need - whole) <= 1e-9 * whole ? Math.max(whole, 1) : Math.ceil(need);
}

/**
 * "x ± U": U rounded to two significant figures, x rounded to the same decimal place
 * as U (10.05762 with U 0.027 → "10.058 ± 0.027"; 1234.5 with U 153.4 → "1230 ± 150").
 * GUM (JCGM 100:2008) 7.2.6: an uncertainty is quoted to at most two significant digits,
 * and the estimate is rounded to be consistent with it (its example: y = 10.057 62 Ω with
 * u_c = 27 mΩ is given as 10.058 Ω). NIST GLP 9 (NISTIR 6969, 2019) words the same steps:
 * U to two significant digits, the result to the same decimal places. The GUM allows rounding
 * U up; phasebook rounds to the nearest, ties as the method says. Both are rounded from their
 * values at 15 significant digits. U must be finite and above 0.
 */
export function withUncertainty(x: number, u: number, rounding: Rounding): string {
  const mode = roundingMode(rounding);
  const U = new Decimal(u.toPrecision(15)).toSignificantDigits(2, mode);
  // The place of U's second significant digit, as a power of ten (after rounding: 0.0996 → 0.10, place −2).
  const place = U.e - 1;
  const scale = new Decimal(10).pow(place);
  let X = new Decimal(x.toPrecision(15)).div(scale).toDecimalPlaces(0, mode).mul(scale);
  if (X.isZero()) X = new Decimal(0); // no "-0.00"
  const decimals = Math.max(0, -place);
  return `${X.toFixed(decimals)} ± ${U.toFixed(decimals)}`;
}

function roundingMode(rounding: Rounding): Decimal.Rounding {
  return rounding === 'half-even' ? Decimal.ROUND_HALF_EVEN : Decimal.ROUND_HALF_UP; // decimal.js: HALF_UP is away from zero
}

/**
 * x rounded to `sig` significant figures, as text with its trailing zeros
 * (0.00461 → "0.00461", 6.19 → "6.19", 2 → "2.00", 15234 → "15200"). The value
 * rounded is x as a spreadsheet keeps it, at 15 significant digits, so that
 * 0.1 + 0.2 is 0.3 and a decimal tie such as 2.665 is a tie; ties go half to
 * even or half away from zero as the method says.
 */
export function roundToSignificant(x: number, sig: number, rounding: Rounding): string {
  if (!Number.isFinite(x)) return '';
  if (x === 0) return '0';
  const kept = x.toPrecision(15);
  const v = Math.abs(x);
  // Away from a decimal tie, rounding the double of the 15-digit value is rounding that value (a rounding
  // boundary has at most 15 digits, so no double lies between it and the value): the engine's toPrecision
  // does it, fast, once per row. At a tie the rule decides, exactly (decimal.js).
  if (v >= 1e-6 && v < 1e15 && !isTie(kept, sig)) {
    const rounded = Number(Number(kept).toPrecision(sig));
    if (rounded === 0) return '0';
    const exponent = Math.floor(Math.log10(Math.abs(rounded)) + 1e-9); // the power of ten of the first digit
    // toFixed writes the digits of a double nearest a short decimal back exactly.
    return rounded.toFixed(Math.max(0, sig - 1 - exponent));
  }
  const d = new Decimal(kept).toSignificantDigits(sig, roundingMode(rounding));
  const exponent = d.e; // the power of ten of the first significant digit
  return exponent >= sig - 1 ? d.toFixed(0) : d.toFixed(sig - 1 - exponent);
}

/**
 * Whether a 15-digit value is exactly halfway at `sig` figures: it has sig + 1 figures, the last a 5.
 * (Decimals of at most 15 figures have doubles of their own, so equal doubles mean equal decimals.)
 */
function isTie(kept: string, sig: number): boolean {
  const v = Number(kept);
  const longer = v.toPrecision(sig + 1);
  const e = longer.indexOf('e');
  return longer.charCodeAt((e < 0 ? longer.length : e) - 1) === 53 /* "5" */ && Number(longer) === v;
}
