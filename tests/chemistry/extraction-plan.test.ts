import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { StopError } from '../../src/errors.js';
import { distributionRatio, extractionEfficiency, neutralFraction } from '../../src/chemistry/partition.js';
import {
  distributionRatioFor,
  efficiencyTable,
  neutralPh,
  portionsFor,
  solventVolumeFor,
} from '../../src/chemistry/extraction-plan.js';

// Worked examples E1–E5, E9 are from REFERENCES.md §1, attributed there as noted beside each check.

/** A published figure given to `decimals` places agrees when within half a unit of its last place. */
function expectPublished(value: number, published: number, decimals: number): void {
  expect(Math.abs(value - published)).toBeLessThanOrEqual(0.5 * 10 ** -decimals + 1e-12);
}

describe('efficiencyTable', () => {
  it('E1 — Harris, Quantitative Chemical Analysis: K = 3, 100 mL water, 500 mL solvent once or as 5 × 100 mL', () => {
    const rows = efficiencyTable({ d: 3, sampleVolume: 100, totalSolventVolume: 500, maxPortions: 5 });
    expect(rows.map((r) => r.portions)).toEqual([1, 2, 3, 4, 5]);
    expect(rows.map((r) => r.portionVolume)).toEqual([500, 250, 500 / 3, 125, 100]);
    expectPublished(1 - rows[0].efficiency, 0.062, 3); // published q = 0.062 (exact 0.0625)
    expectPublished(100 * rows[0].efficiency, 93.8, 1); // published 93.8 % (exact 93.75)
    expect(rows[0].efficiency).toBeCloseTo(0.9375, 12); // exact: 1 − 100/1600
    expect(100 * rows[4].efficiency).toBeCloseTo(99.9, 2); // published 99.90 %
    expect(1 - rows[4].efficiency).toBeCloseTo(9.765625e-4, 12); // exact: (1/4)^5
  });

  it('E2 — expertsmind: D = 10, 50 mL water, 100 mL CCl4 once or as 5 × 20 mL', () => {
    const rows = efficiencyTable({ d: 10, sampleVolume: 50, totalSolventVolume: 100, maxPortions: 5 });
    expect(1 - rows[0].efficiency).toBeCloseTo(0.04762, 5); // published q = 0.04762, 95.24 %
    expect(rows[4].portionVolume).toBe(20);
    expect(1 - rows[4].efficiency).toBeCloseTo(0.00032, 8); // published q = 0.00032, 99.97 %
  });

  it('E3 — Harvey, Analytical Chemistry 2.0 §7.7: K_D = 5.00, 50.00 mL water, 15.00 mL chloroform once or as 3 × 5.00 mL', () => {
    const rows = efficiencyTable({ d: 5, sampleVolume: 50, totalSolventVolume: 15, maxPortions: 3 });
    expect(100 * rows[0].efficiency).toBeCloseTo(60.0, 10); // published 60.0 %
    expect(rows[2].portionVolume).toBe(5);
    expect(100 * rows[2].efficiency).toBeCloseTo(70.4, 1); // published 70.4 %
    expect(100 * rows[2].efficiency).toBeCloseTo(70.37, 2); // exact: 1 − (2/3)^3
  });

  it('E4 — Harvey §7.7 weak acid: Ka 1.00e-5, K_D 3.00, 50.00 mL water + 50.00 mL hexane at pH 3.00 and 5.00', () => {
    const dAt3 = distributionRatio(3, 3, 5, 'acid');
    const dAt5 = distributionRatio(3, 5, 5, 'acid');
    expect(dAt3).toBeCloseTo(2.9703, 4); // REFERENCES.md E4, computed
    expect(dAt5).toBeCloseTo(1.5, 12);
    const at3 = efficiencyTable({ d: dAt3, sampleVolume: 50, totalSolventVolume: 50, maxPortions: 1 });
    const at5 = efficiencyTable({ d: dAt5, sampleVolume: 50, totalSolventVolume: 50, maxPortions: 1 });
    expect(100 * at3[0].efficiency).toBeCloseTo(74.8, 1); // published 74.8 %
    expect(100 * at5[0].efficiency).toBeCloseTo(60, 10); // published 60 %
  });

  it('E5 — Harris amine example: K 3.0, Ka(BH+) 1.0e-9, 50 mL of 0.010 M + 100 mL solvent', () => {
    const dAt10 = distributionRatio(3, 10, 9, 'base');
    const dAt8 = distributionRatio(3, 8, 9, 'base');
    expect(dAt10).toBeCloseTo(2.73, 2); // published D = 2.73
    expect(dAt8).toBeCloseTo(0.273, 3); // published D = 0.273
    const left = (d: number) => 1 - efficiencyTable({ d, sampleVolume: 50, totalSolventVolume: 100, maxPortions: 1 })[0].efficiency;
    expect(0.01 * left(dAt10)).toBeCloseTo(0.0015, 4); // published C_aq = 0.0015 M
    expect(left(dAt10)).toBeCloseTo(0.15493, 5); // REFERENCES.md E5, computed
    expect(0.01 * left(dAt8)).toBeCloseTo(0.0065, 4); // published C_aq = 0.0065 M
    expect(left(dAt8)).toBeCloseTo(0.64706, 5); // REFERENCES.md E5, computed
  });

  it('never gets worse by splitting the same solvent into more portions (computed)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.01, max: 1000, noNaN: true }),
        fc.double({ min: 1, max: 2000, noNaN: true }),
        fc.double({ min: 1, max: 2000, noNaN: true }),
        (d, sampleVolume, totalSolventVolume) => {
          const rows = efficiencyTable({ d, sampleVolume, totalSolventVolume, maxPortions: 6 });
          for (let i = 1; i < rows.length; i++) expect(rows[i].efficiency).toBeGreaterThanOrEqual(rows[i - 1].efficiency - 1e-12);
        },
      ),
    );
  });
});

describe('solventVolumeFor', () => {
  it('E3 — Harvey §7.7: 9990 mL of chloroform for 99.9 % in one step (K_D 5.00, 50.00 mL)', () => {
    const r = solventVolumeFor({ d: 5, sampleVolume: 50, target: 0.999 });
    expect(r.portionVolume).toBeCloseTo(9990, 6);
    expect(r.totalVolume).toBeCloseTo(9990, 6);
  });

  it('E3 — Harvey §7.7: 8 portions of 15 mL reach 99.9 %, so 8 portions need at most 15 mL each', () => {
    const r = solventVolumeFor({ d: 5, sampleVolume: 50, target: 0.999, portions: 8 });
    expect(r.portionVolume).toBeLessThanOrEqual(15);
    expect(r.portionVolume).toBeCloseTo(50 * (1000 ** (1 / 8) - 1) / 5, 12); // the closed form, computed
    expect(r.totalVolume).toBeCloseTo(8 * r.portionVolume, 12);
  });

  it('E9 — EPA 3510C geometry: D = 60.69 needs about 60 mL × 3 for 99 % from 1000 mL (derived)', () => {
    expect(solventVolumeFor({ d: 60.69, sampleVolume: 1000, target: 0.99, portions: 3 }).portionVolume).toBeCloseTo(60, 2);
  });

  it('reaches exactly the target when used (round trip through extractionEfficiency, computed)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.05, max: 500, noNaN: true }),
        fc.double({ min: 1, max: 2000, noNaN: true }),
        fc.double({ min: 0.05, max: 0.9999, noNaN: true }),
        fc.integer({ min: 1, max: 8 }),
        (d, sampleVolume, target, portions) => {
          const { portionVolume } = solventVolumeFor({ d, sampleVolume, target, portions });
          expect(extractionEfficiency(d, sampleVolume, portionVolume, portions)).toBeCloseTo(target, 9);
        },
      ),
    );
  });
});

describe('distributionRatioFor', () => {
  it.each([
    // E9 — EPA 3510C geometry, 1000 mL sample, 3 × 60 mL (REFERENCES.md §1, derived check values)
    [0.99, 60.69],
    [0.95, 28.57],
    [0.9, 19.24],
    [0.7, 8.23],
  ])('E9: %f extracted by 3 × 60 mL from 1000 mL needs D = %f', (target, d) => {
    expect(distributionRatioFor({ sampleVolume: 1000, portionVolume: 60, target, portions: 3 })).toBeCloseTo(d, 2);
  });

  it('E3 — Harvey §7.7: one 9990 mL portion from 50 mL at 99.9 % needs D = 5 (inverse of the 9990 mL answer)', () => {
    expect(distributionRatioFor({ sampleVolume: 50, portionVolume: 9990, target: 0.999 })).toBeCloseTo(5, 10);
  });
});

describe('portionsFor', () => {
  it('E3 — Harvey §7.7: 8 portions of 15.00 mL for 99.9 % (K_D 5.00, 50.00 mL; n = 7.54 rounded up)', () => {
    const r = portionsFor({ d: 5, sampleVolume: 50, portionVolume: 15, target: 0.999 });
    expect(r.portions).toBe(8);
    expect(r.totalVolume).toBe(120);
    expect(r.efficiency).toBeGreaterThanOrEqual(0.999);
    expect(extractionEfficiency(5, 50, 15, 7)).toBeLessThan(0.999); // 7 would not do
  });

  it.each([
    // [d, sampleVolume, portionVolume, target, portions] — checked by hand
    [1, 100, 100, 0.5, 1], // one equal-volume portion at D = 1 extracts exactly 50 %
    [1, 100, 100, 0.75, 2], // exactly 1 − (1/2)^2: no extra portion for rounding
    [1, 100, 100, 0.875, 3], // exactly 1 − (1/2)^3
    [1, 100, 100, 0.8751, 4],
    [9, 10, 10, 0.999, 3], // q = 0.1: exactly 1 − 0.1^3
    [9, 10, 10, 0.9999, 4], // q = 0.1: ln(1e-4)/ln(0.1) comes out as 4.0000000000000049 in floating point
    [4, 10, 10, 0.99968, 5], // q = 0.2: exactly 1 − 0.2^5; the log ratio is 5.000000000000026
    [9, 10, 10, 0.9, 1],
    [3, 100, 500, 0.9, 1], // E1: one 500 mL portion already gives 93.75 %
  ])('D %f, %f mL, %f mL portions, target %f → %i', (d, sampleVolume, portionVolume, target, portions) => {
    expect(portionsFor({ d, sampleVolume, portionVolume, target }).portions).toBe(portions);
  });

  it('gives the smallest sufficient whole number (computed)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.05, max: 500, noNaN: true }),
        fc.double({ min: 1, max: 2000, noNaN: true }),
        fc.double({ min: 1, max: 500, noNaN: true }),
        fc.double({ min: 0.05, max: 0.9999, noNaN: true }),
        (d, sampleVolume, portionVolume, target) => {
          const { portions, efficiency } = portionsFor({ d, sampleVolume, portionVolume, target });
          expect(efficiency).toBeGreaterThanOrEqual(target);
          if (portions > 1) expect(extractionEfficiency(d, sampleVolume, portionVolume, portions - 1)).toBeLessThan(target);
        },
      ),
    );
  });
});

describe('neutralPh', () => {
  it('E4 — Harvey §7.7 weak acid, pKa 5.00: at or below pH 3.0044 for 99 % neutral; pH 3.00 is the 2-unit rule', () => {
    const r = neutralPh({ pka: 5, acidBase: 'acid' });
    expect(r.bound).toBe('upper');
    expect(r.ph).toBeCloseTo(5 - Math.log10(99), 12); // 3.00436, computed
    expect(r.ruleOfThumbPh).toBe(3); // common practice: 2 pH units below the pKa
    expect(neutralFraction(r.ph, 5, 'acid')).toBeCloseTo(0.99, 12); // consistent with partition.ts
    expect(neutralFraction(3, 5, 'acid')).toBeGreaterThan(0.99); // E4 works at pH 3.00: D = 2.9703 ≈ K_D
  });

  it('E5 — Harris amine, pKa(BH+) 9.00: at or above pH 10.9956 for 99 % neutral; pH 11 by the 2-unit rule', () => {
    const r = neutralPh({ pka: 9, acidBase: 'base' });
    expect(r.bound).toBe('lower');
    expect(r.ph).toBeCloseTo(9 + Math.log10(99), 12);
    expect(r.ruleOfThumbPh).toBe(11); // common practice: 2 pH units above the pKa
    expect(neutralFraction(r.ph, 9, 'base')).toBeCloseTo(0.99, 12);
  });

  it.each([
    // [f, pKa − pH for an acid] — log10(f/(1−f)), computed
    [0.5, 0],
    [0.9, Math.log10(9)],
    [0.999, Math.log10(999)],
  ])('neutral fraction %f is log10(f/(1−f)) = %f units past the pKa', (neutralFractionWanted, shift) => {
    expect(neutralPh({ pka: 4.2, acidBase: 'acid', neutralFraction: neutralFractionWanted }).ph).toBeCloseTo(4.2 - shift, 12);
    expect(neutralPh({ pka: 4.2, acidBase: 'base', neutralFraction: neutralFractionWanted }).ph).toBeCloseTo(4.2 + shift, 12);
  });
});

describe('bad planning inputs', () => {
  function stopMessage(run: () => unknown): string {
    try {
      run();
    } catch (e) {
      expect(e).toBeInstanceOf(StopError);
      expect((e as StopError).kind).toBe('usage');
      return (e as Error).message;
    }
    throw new Error('expected a StopError');
  }

  it.each<[string, () => unknown, string]>([
    ['D 0', () => efficiencyTable({ d: 0, sampleVolume: 50, totalSolventVolume: 15, maxPortions: 3 }), 'expected a distribution ratio above 0, got "0"'],
    ['D NaN', () => portionsFor({ d: NaN, sampleVolume: 50, portionVolume: 15, target: 0.9 }), 'expected a distribution ratio above 0, got "NaN"'],
    ['D infinite', () => solventVolumeFor({ d: Infinity, sampleVolume: 50, target: 0.9 }), 'expected a distribution ratio above 0, got "Infinity"'],
    ['sample volume negative', () => efficiencyTable({ d: 5, sampleVolume: -50, totalSolventVolume: 15, maxPortions: 3 }), 'expected a sample volume above 0, got "-50"'],
    ['total solvent 0', () => efficiencyTable({ d: 5, sampleVolume: 50, totalSolventVolume: 0, maxPortions: 3 }), 'expected a total solvent volume above 0, got "0"'],
    ['max portions 0', () => efficiencyTable({ d: 5, sampleVolume: 50, totalSolventVolume: 15, maxPortions: 0 }), 'expected a whole number of portions of at least 1, got "0"'],
    ['portions 2.5', () => solventVolumeFor({ d: 5, sampleVolume: 50, target: 0.9, portions: 2.5 }), 'expected a whole number of portions of at least 1, got "2.5"'],
    ['target 1', () => solventVolumeFor({ d: 5, sampleVolume: 50, target: 1 }), 'expected a target fraction above 0 and below 1, got "1"'],
    ['target as a percentage', () => portionsFor({ d: 5, sampleVolume: 50, portionVolume: 15, target: 99.9 }), 'expected a target fraction above 0 and below 1, got "99.9"'],
    ['target 0', () => distributionRatioFor({ sampleVolume: 1000, portionVolume: 60, target: 0 }), 'expected a target fraction above 0 and below 1, got "0"'],
    ['portion volume 0', () => distributionRatioFor({ sampleVolume: 1000, portionVolume: 0, target: 0.9 }), 'expected a portion volume above 0, got "0"'],
    ['portion volume for portionsFor', () => portionsFor({ d: 5, sampleVolume: 50, portionVolume: -1, target: 0.9 }), 'expected a portion volume above 0, got "-1"'],
    ['D too small to extract anything', () => portionsFor({ d: 1e-20, sampleVolume: 50, portionVolume: 15, target: 0.9 }), 'expected a distribution ratio that extracts a measurable fraction, got "1e-20"'],
    ['pKa NaN', () => neutralPh({ pka: NaN, acidBase: 'acid' }), 'expected a pKa as a number, got "NaN"'],
    ['neutral fraction 1', () => neutralPh({ pka: 5, acidBase: 'base', neutralFraction: 1 }), 'expected a neutral fraction above 0 and below 1, got "1"'],
  ])('%s', (_name, run, message) => {
    expect(stopMessage(run)).toBe(message);
  });
});
