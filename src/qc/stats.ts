/**
 * Descriptive statistics over a column of numbers.
 *
 * NaN is the engine's "empty" (STYLE.md habit 2), so every function here skips
 * NaN entries and works on what is left. A statistic that is undefined for what
 * is left (no values, or one value for a standard deviation) is NaN. Infinite
 * values are not skipped: they are real arithmetic results and propagate.
 */

/** Arithmetic mean of the non-NaN entries; NaN when there are none. */
export function mean(xs: ArrayLike<number>): number {
  let sum = 0;
  let n = 0;
  for (let i = 0; i < xs.length; i++) {
    const x = xs[i];
    if (Number.isNaN(x)) continue;
    sum += x;
    n++;
  }
  return n === 0 ? NaN : sum / n;
}

/**
 * Sample standard deviation (divisor n − 1) of the non-NaN entries; NaN when
 * fewer than two. Two passes (mean first, then squared deviations) so that a
 * large common offset, e.g. recoveries near 100, does not cost precision.
 */
export function sampleSd(xs: ArrayLike<number>): number {
  const m = mean(xs);
  let squares = 0;
  let n = 0;
  for (let i = 0; i < xs.length; i++) {
    const x = xs[i];
    if (Number.isNaN(x)) continue;
    squares += (x - m) * (x - m);
    n++;
  }
  return n < 2 ? NaN : Math.sqrt(squares / (n - 1));
}

/**
 * Relative standard deviation in percent, 100·s/|mean| (the coefficient of
 * variation). NaN when s is undefined or the mean is 0.
 */
export function rsdPct(xs: ArrayLike<number>): number {
  const m = mean(xs);
  if (m === 0) return NaN;
  return (100 * sampleSd(xs)) / Math.abs(m);
}

/** Smallest and largest non-NaN entries; both NaN when there are none. */
export function minMax(xs: ArrayLike<number>): { min: number; max: number } {
  let min = NaN;
  let max = NaN;
  for (let i = 0; i < xs.length; i++) {
    const x = xs[i];
    if (Number.isNaN(x)) continue;
    if (!(x >= min)) min = x; // also true while min is still NaN
    if (!(x <= max)) max = x;
  }
  return { min, max };
}
