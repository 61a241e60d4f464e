import { describe, expect, it } from 'vitest';
import { mdlFromBlanks, methodDetectionLimit, t99 } from '../../src/figures/mdl.js';

// Procedure: 40 CFR Part 136 Appendix B, Revision 2 (EPA 821-R-16-006, December 2016), §2(a)–(b), wording
// from memory (REFERENCES.md §8). Expected values are worked by hand from the published Student t table.

describe('one-sided Student t at 99 %', () => {
  // Student t table, one-sided 0.99 (REFERENCES.md §8, from memory; the same in any statistics handbook table).
  it.each([
    [7, 3.143],
    [8, 2.998],
    [9, 2.896],
    [10, 2.821],
    [11, 2.764],
    [21, 2.528],
    [31, 2.457],
  ])('t(n − 1, 0.99) for n = %i is %f', (n, table) => {
    expect(t99(n)).toBeCloseTo(table, 3);
  });
});

/** 0.1 … 0.7: s = 0.1·√(28/6) = 0.216025 (hand). */
const SPIKES_7 = [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7];
const S_SPIKES = 0.1 * Math.sqrt(28 / 6);

describe('MDL_s from the low-level spiked blanks', () => {
  it('is t(6, 0.99) · s over seven spikes (3.143 × 0.216025 = 0.67897)', () => {
    const m = methodDetectionLimit({ spikes: SPIKES_7, spikesNotDetected: 0, blanks: [], blanksNotDetected: 7 });
    expect(m.mdlS).toBeCloseTo(3.143 * S_SPIKES, 3);
    // No blank gave a number: MDL_b does not apply and the MDL is MDL_s.
    expect(m.blanksRule).toBe('not_applicable');
    expect(m.mdlB).toBeNaN();
    expect(m.mdl).toBe(m.mdlS);
    expect(m.reasons).toEqual([]);
  });

  it.each([
    [6, ['1 more low-level spiked blank (type mdl) needed: 7 at least, 6 recorded']],
    [2, ['5 more low-level spiked blanks (type mdl) needed: 7 at least, 2 recorded']],
  ])('refuses %i spikes with how many more are needed', (n, reasons) => {
    const m = methodDetectionLimit({ spikes: SPIKES_7.slice(0, n), spikesNotDetected: 0, blanks: [], blanksNotDetected: 7 });
    expect(m.mdlS).toBeNaN();
    expect(m.mdl).toBeNaN();
    expect(m.moreSpikes).toBe(7 - n);
    expect(m.reasons).toEqual(reasons);
  });

  it('refuses spikes that were not detected (the spike was too low)', () => {
    const m = methodDetectionLimit({ spikes: SPIKES_7, spikesNotDetected: 1, blanks: [], blanksNotDetected: 7 });
    expect(m.mdl).toBeNaN();
    expect(m.reasons).toEqual(['1 of 8 low-level spiked blanks were not detected: the spike is too low for the procedure; spike higher']);
  });
});

describe('MDL_b from the method blanks', () => {
  it('with every blank numerical: mean + t(n − 1, 0.99) · s (hand: 0.01 … 0.07 → 0.04 + 3.143 × 0.0216025)', () => {
    const b = mdlFromBlanks([0.01, 0.02, 0.03, 0.04, 0.05, 0.06, 0.07], 0);
    expect(b.rule).toBe('mean_plus_t_s');
    expect(b.value).toBeCloseTo(0.04 + 3.143 * 0.01 * Math.sqrt(28 / 6), 4);
  });

  it('takes the mean as 0 when it is negative (hand: −0.07 … −0.01 → 0 + 3.143 × 0.0216025)', () => {
    const b = mdlFromBlanks([-0.07, -0.06, -0.05, -0.04, -0.03, -0.02, -0.01], 0);
    expect(b.value).toBeCloseTo(3.143 * 0.01 * Math.sqrt(28 / 6), 4);
  });

  it('with some blanks not detected: the highest blank result', () => {
    expect(mdlFromBlanks([0.02, 0.09, 0.05], 5)).toEqual({ value: 0.09, rule: 'highest' });
  });

  it('with no blank numerical: does not apply', () => {
    expect(mdlFromBlanks([], 12)).toEqual({ value: NaN, rule: 'not_applicable' });
  });

  // The procedure's own example (§2(b)(iii)(B), from memory): 164 blanks whose highest are … 1.5, 1.7, 1.9, 5.0, 10;
  // 164 × 0.99 = 162.36 rounds to the 162nd result, so MDL_b = 1.9.
  const low159 = Array.from({ length: 159 }, (_, i) => 0.01 * (i + 1) * (1.4 / 1.59)); // all below 1.5
  it('above 100 blanks, all numerical: the 99th percentile by rank (the procedure\'s 164-blank example gives 1.9)', () => {
    const b = mdlFromBlanks([...low159, 1.5, 1.7, 1.9, 5.0, 10].sort((x, y) => x - y), 0);
    expect(b).toEqual({ value: 1.9, rule: 'percentile_99' });
  });

  it('above 100 blanks, some not detected: the same rank, non-detects ranking lowest', () => {
    const b = mdlFromBlanks([...low159.slice(40), 1.5, 1.7, 1.9, 5.0, 10].sort((x, y) => x - y), 40);
    expect(b).toEqual({ value: 1.9, rule: 'percentile_99' });
  });

  it('MDL is the larger of MDL_s and MDL_b', () => {
    const high = methodDetectionLimit({ spikes: SPIKES_7, spikesNotDetected: 0, blanks: [0.2, 0.9], blanksNotDetected: 5 });
    expect(high.mdlB).toBe(0.9);
    expect(high.mdl).toBe(0.9);
    const low = methodDetectionLimit({ spikes: SPIKES_7, spikesNotDetected: 0, blanks: [0.2, 0.3], blanksNotDetected: 5 });
    expect(low.mdl).toBe(low.mdlS);
  });

  it('refuses fewer than seven blanks with how many more are needed', () => {
    const m = methodDetectionLimit({ spikes: SPIKES_7, spikesNotDetected: 0, blanks: [0.01, 0.02], blanksNotDetected: 2 });
    expect(m.mdlB).toBeNaN();
    expect(m.mdl).toBeNaN();
    expect(m.blanksRule).toBeUndefined();
    expect(m.reasons).toEqual(['3 more method blanks needed: 7 at least, 4 recorded with a result']);
  });
});
