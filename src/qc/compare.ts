/**
 * The one place QC compares a value with a limit. Limits are inclusive and a
 * value within a relative 1e-9 of a limit counts as on it, so binary noise
 * (13/10·100 = 130.00000000000003) never fails a result that is exactly at a
 * limit in decimal. Recorded in the Provenance sheet.
 */
export const LIMIT_TOLERANCE = 1e-9;
export const COMPARISON_RULE =
  'limits are inclusive; a value within a relative 1e-9 of a limit counts as on the limit';

const slack = (limit: number) => LIMIT_TOLERANCE * Math.max(1, Math.abs(limit));

export function isBelow(value: number, limit: number): boolean {
  return value < limit - slack(limit);
}

export function isAbove(value: number, limit: number): boolean {
  return value > limit + slack(limit);
}

/** value ≥ limit, with the same tolerance (a blank exactly at the RL is a hit). */
export function isAtOrAbove(value: number, limit: number): boolean {
  return !isBelow(value, limit);
}
