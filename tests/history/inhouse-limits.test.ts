import { describe, expect, it } from 'vitest';
import { inHouseLimits, rpdLimits } from '../../src/history/inhouse-limits.js';

// REFERENCES.md §2, constructed checks (computed), limits per US EPA SW-846 Method 8000 practice.
const LCS_20 = [95, 102, 98, 91, 105, 99, 97, 100, 94, 103, 96, 101, 99, 92, 104, 98, 100, 97, 95, 102];
const RPD_20 = [4.1, 6.3, 2.8, 9.5, 5.0, 3.7, 7.2, 4.4, 6.8, 5.5, 3.1, 8.0, 4.9, 6.1, 2.2, 5.8, 7.7, 4.0, 3.5, 6.6];

describe('inHouseLimits', () => {
  it('matches the 20-LCS example: LCL 86.83, LWL 90.68, UWL 106.12, UCL 109.97 (REFERENCES.md §2)', () => {
    const r = inHouseLimits(LCS_20);
    expect(r.n).toBe(20);
    expect(r.mean).toBeCloseTo(98.4, 10);
    expect(r.sd).toBeCloseTo(3.858, 4);
    expect(r.controlLow).toBeCloseTo(86.83, 2);
    expect(r.warningLow).toBeCloseTo(90.68, 2);
    expect(r.warningHigh).toBeCloseTo(106.12, 2);
    expect(r.controlHigh).toBeCloseTo(109.97, 2);
    expect(r.sufficient).toBe(true);
  });

  it('gives p ± 2s = 70–110 % for p = 90 %, s = 10 % (EPA 8000B §8.7 example, from memory)', () => {
    const r = inHouseLimits([80, 90, 100]); // mean 90, s 10, checked by hand
    expect(r.warningLow).toBeCloseTo(70, 12);
    expect(r.warningHigh).toBeCloseTo(110, 12);
    expect(r.controlLow).toBeCloseTo(60, 12);
    expect(r.controlHigh).toBeCloseTo(120, 12);
    expect(r.sufficient).toBe(false);
  });

  it.each([
    // [points, minPoints, sufficient] — at least 20 points (county QA plan, REFERENCES.md §2)
    [20, undefined, true],
    [19, undefined, false],
    [20, 30, false],
    [3, 3, true],
    [1, 1, false], // one point has no SD, whatever minPoints says
  ])('%i points with minPoints %s → sufficient %s', (count, minPoints, sufficient) => {
    const r = inHouseLimits(LCS_20.slice(0, count), minPoints === undefined ? {} : { minPoints });
    expect(r.n).toBe(count);
    expect(r.sufficient).toBe(sufficient);
  });

  it('skips empty entries and counts only the rest', () => {
    const r = inHouseLimits(Float64Array.from([NaN, ...LCS_20, NaN]));
    expect(r.n).toBe(20);
    expect(r.controlLow).toBeCloseTo(86.83, 2);
    expect(r.sufficient).toBe(true);
  });

  it('gives NaN limits from fewer than two values', () => {
    const r = inHouseLimits([NaN, 98]);
    expect(r.n).toBe(1);
    expect(r.mean).toBe(98);
    for (const v of [r.sd, r.warningLow, r.warningHigh, r.controlLow, r.controlHigh]) expect(v).toBeNaN();
    expect(r.sufficient).toBe(false);
  });
});

describe('rpdLimits', () => {
  it('matches the 20-RPD example: warning 9.22, control 11.15 (REFERENCES.md §2)', () => {
    const r = rpdLimits(RPD_20);
    expect(r.n).toBe(20);
    expect(r.mean).toBeCloseTo(5.36, 10);
    expect(r.sd).toBeCloseTo(1.9302, 4);
    expect(r.warning).toBeCloseTo(9.22, 2);
    expect(r.control).toBeCloseTo(11.15, 2);
    expect(r.sufficient).toBe(true);
  });

  it('takes minPoints like the recovery limits', () => {
    expect(rpdLimits(RPD_20, { minPoints: 30 }).sufficient).toBe(false);
    expect(rpdLimits(RPD_20.slice(0, 19)).sufficient).toBe(false);
  });

  it('gives NaN limits from no values', () => {
    const r = rpdLimits([]);
    expect(r.n).toBe(0);
    expect(r.warning).toBeNaN();
    expect(r.control).toBeNaN();
  });
});
