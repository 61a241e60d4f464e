import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { mean as mathMean, std as mathStd } from 'mathjs';
import { mean, minMax, rsdPct, sampleSd } from '../../src/qc/stats.js';

// REFERENCES.md §2, constructed check: 20 LCS recoveries, mean 98.40, s (n−1) = 3.8580.
const LCS_20 = [95, 102, 98, 91, 105, 99, 97, 100, 94, 103, 96, 101, 99, 92, 104, 98, 100, 97, 95, 102];

describe('mean, sampleSd, rsdPct, minMax', () => {
  it.each([
    // [values, mean, sd, rsd %, min, max, source]
    [[1, 2, 3, 4], 2.5, Math.sqrt(5 / 3), (100 * Math.sqrt(5 / 3)) / 2.5, 1, 4], // checked by hand: Σ(x−x̄)² = 5
    [[2, 4, 4, 4, 5, 5, 7, 9], 5, Math.sqrt(32 / 7), (100 * Math.sqrt(32 / 7)) / 5, 2, 9], // from memory: textbook SD example, Σ(x−x̄)² = 32
    [[-3, -1], -2, Math.SQRT2, (100 * Math.SQRT2) / 2, -3, -1], // checked by hand; RSD uses |mean|
  ])('%j', (xs, m, s, rsd, lo, hi) => {
    expect(mean(xs)).toBeCloseTo(m, 12);
    expect(sampleSd(xs)).toBeCloseTo(s, 12);
    expect(rsdPct(xs)).toBeCloseTo(rsd, 10);
    expect(minMax(xs)).toEqual({ min: lo, max: hi });
  });

  it('matches the 20-LCS example (REFERENCES.md §2, constructed)', () => {
    expect(mean(LCS_20)).toBeCloseTo(98.4, 10);
    expect(sampleSd(LCS_20)).toBeCloseTo(3.858, 4);
    expect(rsdPct(LCS_20)).toBeCloseTo((100 * 3.858) / 98.4, 3); // computed from the published mean and s
    expect(minMax(LCS_20)).toEqual({ min: 91, max: 105 });
  });

  it('skips NaN entries, in plain arrays and Float64Array', () => {
    const withGaps = [NaN, 1, 2, NaN, 3, 4, NaN];
    for (const xs of [withGaps, Float64Array.from(withGaps)]) {
      expect(mean(xs)).toBe(2.5);
      expect(sampleSd(xs)).toBeCloseTo(Math.sqrt(5 / 3), 12);
      expect(minMax(xs)).toEqual({ min: 1, max: 4 });
    }
  });

  it.each([
    ['empty', []],
    ['all NaN', [NaN, NaN]],
  ])('is NaN when there is nothing to describe (%s)', (_name, xs: number[]) => {
    expect(mean(xs)).toBeNaN();
    expect(sampleSd(xs)).toBeNaN();
    expect(rsdPct(xs)).toBeNaN();
    expect(minMax(xs)).toEqual({ min: NaN, max: NaN });
  });

  it('gives NaN for the SD and RSD of a single value, but a mean', () => {
    expect(mean([NaN, 7])).toBe(7);
    expect(sampleSd([NaN, 7])).toBeNaN();
    expect(rsdPct([7])).toBeNaN();
    expect(minMax([7])).toEqual({ min: 7, max: 7 });
  });

  it('gives NaN for the RSD when the mean is 0', () => {
    expect(rsdPct([-1, 1])).toBeNaN();
  });

  it('keeps precision with a large common offset (two-pass SD)', () => {
    // 1e9 + [1, 2, 3, 4] has the same SD as [1, 2, 3, 4]: checked by hand
    expect(sampleSd([1e9 + 1, 1e9 + 2, 1e9 + 3, 1e9 + 4])).toBeCloseTo(Math.sqrt(5 / 3), 6);
  });

  it('agrees with mathjs mean and unbiased std on random data (general-purpose reference library)', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: -1e6, max: 1e6, noNaN: true }), { minLength: 2, maxLength: 50 }), (xs) => {
        const scale = Math.max(1, ...xs.map(Math.abs));
        expect(Math.abs(mean(xs) - (mathMean(xs) as number))).toBeLessThanOrEqual(1e-9 * scale);
        expect(Math.abs(sampleSd(xs) - (mathStd(xs, 'unbiased') as unknown as number))).toBeLessThanOrEqual(1e-9 * scale);
      }),
    );
  });
});
