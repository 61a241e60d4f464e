import { describe, expect, it } from 'vitest';
import { dixonCritical, dixonTest, grubbsCritical, grubbsTest } from '../../src/qc/outliers.js';

// REFERENCES.md §5 computed Grubbs table, which matches ASTM E178 Table 1 to ±0.001 and the
// NIST/SEMATECH e-Handbook §1.3.5.17.1 formula; two-sided columns also match Harvey App. 7.
// [n, one-sided 0.05, two-sided 0.05, one-sided 0.01, two-sided 0.01]
const GRUBBS_TABLE: [number, number, number, number, number][] = [
  [3, 1.1531, 1.1543, 1.1546, 1.1547],
  [4, 1.4625, 1.4813, 1.4925, 1.4962],
  [5, 1.6714, 1.715, 1.7489, 1.7637],
  [6, 1.8221, 1.8871, 1.9442, 1.9728],
  [7, 1.9381, 2.02, 2.0973, 2.1391],
  [8, 2.0317, 2.1266, 2.2208, 2.2744],
  [9, 2.1096, 2.215, 2.3231, 2.3868],
  [10, 2.1761, 2.29, 2.4097, 2.4821],
  [11, 2.2339, 2.3547, 2.4843, 2.5641],
  [12, 2.285, 2.4116, 2.5494, 2.6357],
  [13, 2.3305, 2.462, 2.607, 2.699],
  [14, 2.3717, 2.5073, 2.6585, 2.7554],
  [15, 2.409, 2.5483, 2.7049, 2.8061],
  [16, 2.4433, 2.5857, 2.747, 2.8521],
  [17, 2.4748, 2.62, 2.7854, 2.894],
  [18, 2.504, 2.6516, 2.8208, 2.9325],
  [19, 2.5312, 2.6809, 2.8535, 2.968],
  [20, 2.5566, 2.7082, 2.8838, 3.0008],
];

// NIST/SEMATECH e-Handbook Grubbs example (Tietjen & Moore 1972 uranium-isotope data), REFERENCES.md §5.
const URANIUM = [199.31, 199.53, 200.19, 200.82, 201.92, 201.95, 202.18, 245.57];
// Creatinine replicate example, REFERENCES.md §5 (published G = 1.845; computed 1.8465).
const CREATININE = [0.787, 0.812, 0.796, 0.739, 0.802, 0.823];
// Wikipedia "Dixon's Q test" example, REFERENCES.md §5.
const DIXON_WIKI = [0.189, 0.167, 0.187, 0.183, 0.186, 0.182, 0.181, 0.184, 0.181, 0.177];

describe('grubbsCritical', () => {
  it.each(GRUBBS_TABLE)('n = %i matches the ASTM E178 / NIST computed table', (n, one05, two05, one01, two01) => {
    expect(Math.abs(grubbsCritical(n, { alpha: 0.05, sides: 1 }) - one05)).toBeLessThan(1e-3);
    expect(Math.abs(grubbsCritical(n, { alpha: 0.05, sides: 2 }) - two05)).toBeLessThan(1e-3);
    expect(Math.abs(grubbsCritical(n, { alpha: 0.01, sides: 1 }) - one01)).toBeLessThan(1e-3);
    expect(Math.abs(grubbsCritical(n, { alpha: 0.01, sides: 2 }) - two01)).toBeLessThan(1e-3);
  });

  it('defaults to two-sided at alpha 0.05', () => {
    expect(grubbsCritical(8)).toBe(grubbsCritical(8, { alpha: 0.05, sides: 2 }));
    expect(grubbsCritical(8)).toBeCloseTo(2.1266, 4); // @stdlib incr-grubbs README, NIST example: 2.1266
  });

  it('stays below the upper bound (n−1)/√n of G (REFERENCES.md §5 note on n = 3)', () => {
    for (let n = 3; n <= 20; n++) expect(grubbsCritical(n, { alpha: 0.01 })).toBeLessThan((n - 1) / Math.sqrt(n));
  });

  it.each([
    ['n below 3', 2, 0.05],
    ['n not whole', 5.5, 0.05],
    ['alpha 0', 10, 0],
    ['alpha 1', 10, 1],
    ['alpha NaN', 10, NaN],
  ])('is NaN for %s', (_name, n, alpha) => {
    expect(grubbsCritical(n, { alpha })).toBeNaN();
  });
});

describe('grubbsTest', () => {
  it('finds the uranium outlier (NIST/SEMATECH e-Handbook example)', () => {
    const r = grubbsTest(URANIUM)!;
    expect(r.n).toBe(8);
    expect(r.mean).toBeCloseTo(206.43375, 5); // REFERENCES.md §5, computed
    expect(r.sd).toBeCloseTo(15.852564, 5); // REFERENCES.md §5, computed
    expect(Math.abs(r.statistic - 2.4687)).toBeLessThan(1e-4); // NIST published G = 2.4687
    expect(Math.abs(r.critical - 2.1266)).toBeLessThan(1e-4); // two-sided, @stdlib README
    expect(r.index).toBe(7);
    expect(URANIUM[r.index]).toBe(245.57);
    expect(r.isOutlier).toBe(true);
  });

  it('uses the one-sided critical value when asked (NIST upper one-tailed test, 2.032)', () => {
    const r = grubbsTest(URANIUM, { sides: 1 })!;
    expect(r.critical).toBeCloseTo(2.032, 3);
    expect(r.statistic).toBeCloseTo(2.4688, 4);
    expect(r.isOutlier).toBe(true);
  });

  it('tests the pre-chosen end in a one-sided test', () => {
    // Low end of the uranium data: (206.43375 − 199.31)/15.852564 = 0.44937, computed by hand
    const r = grubbsTest(URANIUM, { sides: 1, direction: 'low' })!;
    expect(r.index).toBe(0);
    expect(r.statistic).toBeCloseTo(0.44937, 4);
    expect(r.isOutlier).toBe(false);
  });

  it('keeps the creatinine low value (REFERENCES.md §5: G = 1.845 < 1.887)', () => {
    const r = grubbsTest(CREATININE)!;
    expect(r.statistic).toBeCloseTo(1.8465, 4); // computed; published 1.845
    expect(r.critical).toBeCloseTo(1.8871, 4); // two-sided 5 %, n = 6, table above
    expect(r.index).toBe(3); // 0.739
    expect(r.isOutlier).toBe(false);
  });

  it('finds a low outlier the same way as a high one (mirror of the NIST data)', () => {
    const r = grubbsTest(URANIUM.map((x) => -x))!;
    expect(r.index).toBe(7);
    expect(r.statistic).toBeCloseTo(2.468765, 5);
    expect(r.isOutlier).toBe(true);
  });

  it('skips empty and non-finite entries but reports the index into the input', () => {
    const withGaps = [NaN, ...URANIUM.slice(0, 4), Infinity, ...URANIUM.slice(4), NaN];
    const r = grubbsTest(Float64Array.from(withGaps))!;
    expect(r.n).toBe(8);
    expect(r.index).toBe(9);
    expect(withGaps[r.index]).toBe(245.57);
    expect(r.statistic).toBeCloseTo(2.468765, 5);
  });

  it.each([
    ['no values', []],
    ['two values', [1, 2]],
    ['two finite values among empties', [NaN, 1, NaN, 2]],
  ])('returns null for %s', (_name, xs: number[]) => {
    expect(grubbsTest(xs)).toBeNull();
  });

  it('reports no outlier when all values are equal (sd 0)', () => {
    const r = grubbsTest([5, 5, 5, 5])!;
    expect(r.sd).toBe(0);
    expect(r.statistic).toBe(0);
    expect(r.isOutlier).toBe(false);
  });

  it('reports no decision when the critical value is unknown', () => {
    const r = grubbsTest(URANIUM, { alpha: 2 })!;
    expect(r.critical).toBeNaN();
    expect(r.isOutlier).toBeNull();
  });
});

describe('dixonCritical', () => {
  it.each([
    // Rorabacher 1991 via Harvey App. 6 / Wikipedia (n = 3–10), secondary reprint (n = 11–15)
    [3, 0.05, 0.97],
    [3, 0.01, 0.994],
    [4, 0.1, 0.765],
    [5, 0.02, 0.78],
    [7, 0.04, 0.586],
    [8, 0.05, 0.526],
    [10, 0.1, 0.412],
    [10, 0.05, 0.466],
    [10, 0.02, 0.527],
    [10, 0.01, 0.568],
    [11, 0.05, 0.444],
    [13, 0.1, 0.361],
    [15, 0.1, 0.338],
    [15, 0.01, 0.475],
  ])('n = %i, alpha %f → %f', (n, alpha, q) => {
    expect(dixonCritical(n, { alpha })).toBe(q);
  });

  it('defaults to alpha 0.05', () => {
    expect(dixonCritical(6)).toBe(0.625);
  });

  it.each([
    ['n below the table', 2, 0.05],
    ['n above the table', 16, 0.05],
    ['n 11 at a level tabulated only to 10', 11, 0.04],
    ['n 11 at 0.02', 11, 0.02],
    ['a level not in the table', 5, 0.03],
    ['n not whole', 4.5, 0.05],
  ])('is NaN for %s', (_name, n, alpha) => {
    expect(dixonCritical(n, { alpha })).toBeNaN();
  });
});

describe('dixonTest', () => {
  it('rejects the Wikipedia suspect at 90 % and keeps it at 95 %', () => {
    const at10 = dixonTest(DIXON_WIKI, { alpha: 0.1 })!;
    expect(at10.statistic).toBeCloseTo(0.4545, 4); // 0.010/0.022
    expect(at10.critical).toBe(0.412);
    expect(at10.index).toBe(1); // 0.167
    expect(at10.isOutlier).toBe(true);

    const at05 = dixonTest(DIXON_WIKI)!;
    expect(at05.critical).toBe(0.466);
    expect(at05.isOutlier).toBe(false);
  });

  it.each([
    // [values, Q, index, outlier at 0.05] — Q checked by hand
    [[10, 11, 12, 20], 0.8, 3, false], // high gap 8 / range 10 < 0.829 (n = 4)
    [[20, 10.5, 10, 11], 0.9, 0, true], // high gap 9 / range 10 > 0.829
    [[1, 9.6, 10, 9.8, 9.9], 8.6 / 9, 0, true], // low gap 8.6 / range 9 > 0.710 (n = 5)
    [[3, 1, 2], 0.5, 0, false], // equal gaps: the high end (3) is the suspect
  ])('%j → Q %f at index %i', (xs, q, index, outlier) => {
    const r = dixonTest(xs)!;
    expect(r.n).toBe(xs.length);
    expect(r.statistic).toBeCloseTo(q, 12);
    expect(r.index).toBe(index);
    expect(r.isOutlier).toBe(outlier);
  });

  it('reports the first of tied extremes', () => {
    expect(dixonTest([1, 5, 9, 9, 2])!.index).toBe(0); // low gap 1 vs high gap 0
    expect(dixonTest([1, 5, 1, 2])!.index).toBe(1); // low gap 0 vs high gap 3: the 5
  });

  it('skips empty entries but reports the index into the input', () => {
    const r = dixonTest([NaN, ...DIXON_WIKI], { alpha: 0.1 })!;
    expect(r.n).toBe(10);
    expect(r.index).toBe(2);
  });

  it('reports no outlier when all values are equal', () => {
    const r = dixonTest([4, 4, 4])!;
    expect(r.statistic).toBe(0);
    expect(r.isOutlier).toBe(false);
  });

  it('reports no decision outside the table', () => {
    const r = dixonTest(Array.from({ length: 16 }, (_, i) => i).concat([100]))!;
    expect(r.n).toBe(17);
    expect(r.critical).toBeNaN();
    expect(r.isOutlier).toBeNull();
  });

  it('returns null for fewer than 3 values', () => {
    expect(dixonTest([1, NaN, 2])).toBeNull();
  });
});
