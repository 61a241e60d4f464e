/**
 * Planning an extraction before it is run: how efficiency depends on how the
 * solvent is split, how much solvent or how many portions reach a target, what
 * distribution ratio a fixed geometry needs, and which pH keeps an ionisable
 * analyte neutral.
 *
 * Built on the fraction left in water after n equal portions,
 * q_n = (V_aq/(V_aq + D·V_org))^n, E = 1 − q_n (IUPAC Gold Book F02503; see
 * partition.ts). Solving (V_aq/(V_aq + D·V))^n = 1 − target for the product D·V
 * gives D·V = V_aq·((1 − target)^(−1/n) − 1), from which both the solvent volume
 * and the distribution ratio needed follow.
 *
 * Efficiencies and targets are fractions 0..1. Volumes are in any one unit; the
 * results come back in it. A bad planning input is a usage error (StopError).
 */
import { StopError } from '../errors.js';
import { type AcidBase, extractionEfficiency, fractionRemaining } from './partition.js';

export interface EfficiencyRow {
  /** Number of equal portions the solvent is split into. */
  portions: number;
  /** Volume of each portion: total / portions. */
  portionVolume: number;
  /** Fraction extracted, 0..1. */
  efficiency: number;
}

/** Efficiency of splitting one total solvent volume into 1, 2, … maxPortions equal portions. */
export function efficiencyTable(input: {
  d: number;
  sampleVolume: number;
  totalSolventVolume: number;
  maxPortions: number;
}): EfficiencyRow[] {
  const d = positive(input.d, 'a distribution ratio');
  const vAq = positive(input.sampleVolume, 'a sample volume');
  const total = positive(input.totalSolventVolume, 'a total solvent volume');
  const maxPortions = wholeNumber(input.maxPortions, 'portions');
  const rows: EfficiencyRow[] = [];
  for (let n = 1; n <= maxPortions; n++) {
    const portionVolume = total / n;
    rows.push({ portions: n, portionVolume, efficiency: extractionEfficiency(d, vAq, portionVolume, n) });
  }
  return rows;
}

/** Solvent per portion, and in total, for `portions` equal portions (default 1) to extract `target`. */
export function solventVolumeFor(input: {
  d: number;
  sampleVolume: number;
  target: number;
  portions?: number;
}): { portionVolume: number; totalVolume: number } {
  const d = positive(input.d, 'a distribution ratio');
  const n = wholeNumber(input.portions ?? 1, 'portions');
  const portionVolume = requiredRatioTimesVolume(input.sampleVolume, input.target, n) / d;
  return { portionVolume, totalVolume: n * portionVolume };
}

/** Distribution ratio needed for `portions` portions (default 1) of `portionVolume` to extract `target`. */
export function distributionRatioFor(input: {
  sampleVolume: number;
  portionVolume: number;
  target: number;
  portions?: number;
}): number {
  const vOrg = positive(input.portionVolume, 'a portion volume');
  const n = wholeNumber(input.portions ?? 1, 'portions');
  return requiredRatioTimesVolume(input.sampleVolume, input.target, n) / vOrg;
}

/**
 * Smallest whole number of portions of `portionVolume` that extracts at least
 * `target`: n ≥ ln(1 − target)/ln(q). The logarithms give the estimate; it is then
 * settled against the efficiency itself, so that rounding (ln ratio 4.0000000000000049
 * for exactly four portions) cannot add or drop a portion.
 */
export function portionsFor(input: {
  d: number;
  sampleVolume: number;
  portionVolume: number;
  target: number;
}): { portions: number; efficiency: number; totalVolume: number } {
  const d = positive(input.d, 'a distribution ratio');
  const vAq = positive(input.sampleVolume, 'a sample volume');
  const vOrg = positive(input.portionVolume, 'a portion volume');
  const target = fraction(input.target, 'a target fraction');
  const q = fractionRemaining(d, vAq, vOrg, 1);
  if (!(q < 1)) {
    // q rounds to 1: D·V_org is below double precision relative to V_aq, and no number of portions helps.
    throw new StopError('usage', `expected a distribution ratio that extracts a measurable fraction, got "${d}"`);
  }
  let portions = Math.max(1, Math.ceil(Math.log(1 - target) / Math.log(q)));
  while (portions > 1 && extractionEfficiency(d, vAq, vOrg, portions - 1) >= target) portions--;
  while (extractionEfficiency(d, vAq, vOrg, portions) < target) portions++;
  return { portions, efficiency: extractionEfficiency(d, vAq, vOrg, portions), totalVolume: portions * vOrg };
}

/**
 * pH that keeps at least `neutralFraction` (default 0.99) of an ionisable analyte
 * in its neutral, extractable form. With f = 1/(1 + 10^(±(pH − pKa))):
 * acid, pH ≤ pKa − log10(f/(1 − f)) (`bound` 'upper'); base, pH ≥ pKa + log10(f/(1 − f))
 * (`bound` 'lower'). `ruleOfThumbPh` is the common-practice 2 pH units past the pKa
 * (below it for an acid, above it for a base), which gives just over 99 % neutral.
 */
export function neutralPh(input: {
  pka: number;
  acidBase: Exclude<AcidBase, 'neutral'>;
  neutralFraction?: number;
}): { bound: 'upper' | 'lower'; ph: number; ruleOfThumbPh: number } {
  const pka = finite(input.pka, 'a pKa');
  const f = fraction(input.neutralFraction ?? 0.99, 'a neutral fraction');
  const shift = Math.log10(f / (1 - f));
  return input.acidBase === 'acid'
    ? { bound: 'upper', ph: pka - shift, ruleOfThumbPh: pka - 2 }
    : { bound: 'lower', ph: pka + shift, ruleOfThumbPh: pka + 2 };
}

/** D·V_org per portion needed for n portions to leave 1 − target in the water. */
function requiredRatioTimesVolume(sampleVolume: number, target: number, n: number): number {
  const vAq = positive(sampleVolume, 'a sample volume');
  const t = fraction(target, 'a target fraction');
  return vAq * ((1 - t) ** (-1 / n) - 1);
}

function positive(value: number, what: string): number {
  if (!(value > 0) || !Number.isFinite(value)) {
    throw new StopError('usage', `expected ${what} above 0, got "${value}"`);
  }
  return value;
}

function fraction(value: number, what: string): number {
  if (!(value > 0 && value < 1)) {
    throw new StopError('usage', `expected ${what} above 0 and below 1, got "${value}"`);
  }
  return value;
}

function wholeNumber(value: number, what: string): number {
  if (!Number.isInteger(value) || value < 1) {
    throw new StopError('usage', `expected a whole number of ${what} of at least 1, got "${value}"`);
  }
  return value;
}

function finite(value: number, what: string): number {
  if (!Number.isFinite(value)) throw new StopError('usage', `expected ${what} as a number, got "${value}"`);
  return value;
}
