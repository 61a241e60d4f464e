import { describe, expect, it } from 'vitest';
import { rmsBias, uncertaintyFromRecoveries, uncertaintyOfLevel } from '../../src/figures/nordtest.js';

// Formulas: Nordtest TR 537 (ed. 4, 2017): u(Rw) = s of control recoveries, u(bias) = √(RMS_bias² + u(Cref)²),
// RMS_bias = √(Σ bias² / n), u_c = √(u(Rw)² + u(bias)²), U = 2·u_c. The expected numbers below are worked by hand
// from first principles (exact fractions written beside each), not taken from the code under test.

/** Ten lcs recoveries at 96 % and ten at 104 %: mean 100, s² = 20·16/19 = 320/19. */
const LCS_20 = [...Array(10).fill(96), ...Array(10).fill(104)] as number[];
/** Matrix spikes: biases −5, 5, −2, 2, −3, 3 → Σ bias² = 76, RMS² = 76/6. */
const MS_6 = [95, 105, 98, 102, 97, 103];

describe('Nordtest uncertainty from recoveries', () => {
  it('combines u(Rw) and u(bias) into U = 2·u_c (worked by hand)', () => {
    const u = uncertaintyFromRecoveries(LCS_20, MS_6, { uCrefPct: 1.5 });
    expect(u.uRwPct).toBeCloseTo(Math.sqrt(320 / 19), 12); // 4.10391
    expect(u.uRwPct).toBeCloseTo(4.10391, 5);
    expect(u.rmsBiasPct).toBeCloseTo(Math.sqrt(76 / 6), 12); // 3.55903
    expect(u.uBiasPct).toBeCloseTo(Math.sqrt(76 / 6 + 2.25), 12); // 3.86221
    expect(u.ucPct).toBeCloseTo(Math.sqrt(320 / 19 + 76 / 6 + 2.25), 12); // 5.63550
    expect(u.expandedPct).toBeCloseTo(11.271, 3);
    expect(u).toMatchObject({ k: 2, nRw: 20, nBias: 6, moreRw: 0, moreBias: 0, uCrefPct: 1.5 });
  });

  it('takes u(Cref) as 0 when the method states none', () => {
    const u = uncertaintyFromRecoveries(LCS_20, MS_6);
    expect(u.uBiasPct).toBeCloseTo(Math.sqrt(76 / 6), 12);
    expect(u.uCrefPct).toBe(0);
  });

  // Nordtest TR 537's recovery example in spirit: recoveries all at 100 % leave only the spike's own uncertainty.
  it('leaves u(bias) = u(Cref) when every matrix spike recovers 100 %', () => {
    const u = uncertaintyFromRecoveries(LCS_20, [100, 100, 100, 100, 100, 100], { uCrefPct: 2 });
    expect(u.uBiasPct).toBe(2);
  });

  it.each([
    { rw: 19, bias: 6, minRw: 20, minBias: 6, moreRw: 1, moreBias: 0 },
    { rw: 20, bias: 5, minRw: 20, minBias: 6, moreRw: 0, moreBias: 1 },
    { rw: 3, bias: 0, minRw: 20, minBias: 6, moreRw: 17, moreBias: 6 },
    { rw: 10, bias: 3, minRw: 10, minBias: 3, moreRw: 0, moreBias: 0 },
  ])('gives no U below the minimum points ($rw lcs, $bias ms; minimum $minRw, $minBias)', ({ rw, bias, minRw, minBias, moreRw, moreBias }) => {
    const u = uncertaintyFromRecoveries(LCS_20.slice(0, rw), [...MS_6, ...MS_6].slice(0, bias), { minRw, minBias });
    expect(u.moreRw).toBe(moreRw);
    expect(u.moreBias).toBe(moreBias);
    expect(Number.isFinite(u.uRwPct)).toBe(moreRw === 0);
    expect(Number.isFinite(u.uBiasPct)).toBe(moreBias === 0);
    expect(Number.isFinite(u.expandedPct)).toBe(moreRw === 0 && moreBias === 0);
  });

  it('skips empty (NaN) recoveries', () => {
    const u = uncertaintyFromRecoveries([...LCS_20, NaN], [...MS_6, NaN]);
    expect(u.nRw).toBe(20);
    expect(u.nBias).toBe(6);
  });

  it('computes RMS_bias as √(Σ(R − 100)²/n) (hand: 90, 110 → 10)', () => {
    expect(rmsBias([90, 110])).toBe(10);
    expect(rmsBias([])).toBeNaN();
  });
});

describe('Nordtest uncertainty of one qc level (one reference material)', () => {
  it('takes the bias from the mean recovery with the standard error of the mean (worked by hand)', () => {
    // Twenty recoveries: ten at 92, ten at 100 → mean 96, bias −4, s² = 20·16/19 = 320/19, (s/√n)² = 16/19.
    const xs = [...Array(10).fill(92), ...Array(10).fill(100)] as number[];
    const u = uncertaintyOfLevel(xs, { uCrefPct: 1 });
    expect(u.uRwPct).toBeCloseTo(Math.sqrt(320 / 19), 12);
    expect(u.rmsBiasPct).toBeCloseTo(4, 12);
    expect(u.uBiasPct).toBeCloseTo(Math.sqrt(16 + 16 / 19 + 1), 12);
    expect(u.expandedPct).toBeCloseTo(2 * Math.sqrt(320 / 19 + 16 + 16 / 19 + 1), 12);
    expect(u).toMatchObject({ nRw: 20, nBias: 20 });
  });

  it('gives the bias (6 points) before u(Rw) (20 points)', () => {
    const u = uncertaintyOfLevel([98, 102, 97, 103, 99, 101]);
    expect(u.uRwPct).toBeNaN();
    expect(u.moreRw).toBe(14);
    // mean 100, bias 0; s² = (4+4+9+9+1+1)/5 = 28/5, (s/√n)² = 28/30
    expect(u.uBiasPct).toBeCloseTo(Math.sqrt(28 / 30), 12);
  });
});
