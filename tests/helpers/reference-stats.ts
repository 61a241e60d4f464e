/**
 * Independent arithmetic for the figures' end-to-end tests (not the code under test): mean, the
 * sample standard deviation (n − 1), the RMS of recoveries' distances from 100 %, and one-sided
 * Student t quantiles at 0.99 from the published table (from memory; REFERENCES.md lists t(6..9)).
 */
export const mean = (xs: number[]): number => xs.reduce((a, b) => a + b, 0) / xs.length;

export const sd = (xs: number[]): number => {
  const m = mean(xs);
  return Math.sqrt(xs.reduce((a, x) => a + (x - m) ** 2, 0) / (xs.length - 1));
};

export const rms = (xs: number[]): number => Math.sqrt(xs.reduce((a, x) => a + (x - 100) ** 2, 0) / xs.length);

/** t(df, 0.99), one-sided: Student t table, from memory. */
export const T_099: Readonly<Record<number, number>> = { 14: 2.624, 29: 2.462 };
