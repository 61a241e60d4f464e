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

/** 1536 → "1.5 KiB"; used in messages only. */
export function formatBytes(n: number): string {
  if (n < 1024) return `${n} bytes`;
  const units = ['KiB', 'MiB', 'GiB', 'TiB'];
  let v = n / 1024;
  let i = 0;
  while (v >= 1024 && i < units.length - 1) {
    v /= 1024;
    i++;
  }
  return `${v.toFixed(1).replace(/\.0$/, '')} ${units[i]}`;
}
