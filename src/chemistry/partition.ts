/**
 * Partition chemistry of a liquid–liquid extraction, on plain numbers.
 *
 * Sources (see ../shared/REFERENCES.md §1):
 * - K_D = [S]org/[S]aq (Nernst distribution law); D covers all forms (IUPAC Gold Book "liquid-liquid extraction").
 * - Only the neutral form extracts: acid D = K/(1+10^(pH−pKa)); base D = K/(1+10^(pKa−pH))
 *   (Harvey, Analytical Chemistry 2.0 §7.7; Harris, Quantitative Chemical Analysis).
 * - Fraction left in water after n equal portions q_n = (V_aq/(V_aq + D·V_org))^n; E = 1 − q_n
 *   (IUPAC Gold Book F02503).
 *
 * NaN means "empty" throughout: an empty input gives an empty result.
 */

export type AcidBase = 'acid' | 'base' | 'neutral';

/** Words accepted in an acid/base cell (compared without case or surrounding spaces). */
export const ACID_WORDS: readonly string[] = ['acid', 'a', 'ha'];
export const BASE_WORDS: readonly string[] = ['base', 'b'];
export const NEUTRAL_WORDS: readonly string[] = ['', 'neutral', 'n', 'none'];

/** Parse the text of an acid/base cell; undefined when it is none of the accepted words. */
export function parseAcidBase(text: string): AcidBase | undefined {
  const t = text.trim().toLowerCase();
  if (ACID_WORDS.includes(t)) return 'acid';
  if (BASE_WORDS.includes(t)) return 'base';
  if (NEUTRAL_WORDS.includes(t)) return 'neutral';
  return undefined;
}

/** Fraction of the analyte in its neutral (extractable) form at this pH. */
export function neutralFraction(ph: number, pka: number, acidBase: AcidBase): number {
  if (acidBase === 'neutral') return 1;
  if (Number.isNaN(ph) || Number.isNaN(pka)) return NaN;
  return acidBase === 'acid' ? 1 / (1 + 10 ** (ph - pka)) : 1 / (1 + 10 ** (pka - ph));
}

/** Distribution ratio D = K·f. */
export function distributionRatio(k: number, ph: number, pka: number, acidBase: AcidBase): number {
  return k * neutralFraction(ph, pka, acidBase);
}

/** Fraction left in the aqueous phase after n equal extractions. */
export function fractionRemaining(d: number, vAq: number, vOrg: number, n: number): number {
  return (vAq / (vAq + d * vOrg)) ** n;
}

/**
 * Fraction of the analyte transferred (0..1) after n extractions of vOrg each.
 * With no distribution ratio (NaN) the transfer is taken as complete: E = 1,
 * which is what a lab assumes when the method gives no K (DESIGN.md §4).
 */
export function extractionEfficiency(d: number, vAq: number, vOrg: number, n: number): number {
  if (Number.isNaN(d)) return 1;
  return 1 - fractionRemaining(d, vAq, vOrg, n);
}

/**
 * Concentration in the original sample from the concentration measured in the
 * final extract, by mass balance: C0 = C_ext · dilution · V_final / (V_aq · E).
 * (Derived from C0·V_aq·E = C_ext·dilution·V_final; see REFERENCES.md §1.)
 */
export function preExtractionConc(
  extractConc: number,
  volumes: { dilution: number; finalVolume: number; sampleVolume: number; efficiency: number },
): number {
  return (extractConc * volumes.dilution * volumes.finalVolume) / (volumes.sampleVolume * volumes.efficiency);
}
