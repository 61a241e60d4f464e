/**
 * Numbers for people to read (messages, printed tables, the report): `digits`
 * significant figures without trailing zeros, an exponent only for very small
 * or very large sizes. Display only: outputs that carry data stay unrounded.
 */
export function significant(x: number, digits: number): string {
  if (!Number.isFinite(x)) return String(x);
  const a = Math.abs(x);
  if (a !== 0 && (a < 1e-4 || a >= 1e9)) return Number(x.toPrecision(digits)).toExponential();
  return String(Number(x.toPrecision(digits)));
}
