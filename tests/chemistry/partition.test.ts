import { describe, expect, it } from 'vitest';
import {
  distributionRatio,
  extractionEfficiency,
  fractionRemaining,
  neutralFraction,
  parseAcidBase,
  preExtractionConc,
} from '../../src/chemistry/partition.js';

// Worked examples gathered in ../shared/REFERENCES.md §1. "Computed" values there were
// recomputed from the stated formula and are used as exact expectations; published
// answers are compared at the precision they were printed.
describe('fraction left in water and efficiency after n extractions', () => {
  it.each([
    // Harris, Quantitative Chemical Analysis, extraction example (E1): K = 3, V_aq = 100 mL
    { src: 'Harris E1(a): one 500 mL portion', d: 3, vAq: 100, vOrg: 500, n: 1, q: 0.0625, published: 0.062, sig: 2 },
    { src: 'Harris E1(b): five 100 mL portions', d: 3, vAq: 100, vOrg: 100, n: 5, q: 9.765625e-4, published: 0.00098, sig: 2 },
    // expertsmind worked example (E2): D = 10, V_aq = 50 mL
    { src: 'E2(a): one 100 mL portion', d: 10, vAq: 50, vOrg: 100, n: 1, q: 0.047619047619047616, published: 0.04762, sig: 4 },
    { src: 'E2(b): five 20 mL portions', d: 10, vAq: 50, vOrg: 20, n: 5, q: 3.2e-4, published: 0.00032, sig: 2 },
    // Harvey, Analytical Chemistry 2.0 §7.7 (E3): K_D = 5.00, 50.00 mL water
    { src: 'Harvey E3: one 15.00 mL portion', d: 5, vAq: 50, vOrg: 15, n: 1, q: 0.4, published: 0.4, sig: 3 },
    { src: 'Harvey E3: three 5.00 mL portions', d: 5, vAq: 50, vOrg: 5, n: 3, q: 0.2962962962962963, published: 0.2963, sig: 4 },
    // Chang, General Chemistry, iodine problem (E8): K = 83, 200 mL water, 30 mL CCl4 portions
    { src: 'Chang E8: one 30 mL portion', d: 83, vAq: 200, vOrg: 30, n: 1, q: 0.07434944237918216, published: 0.074349, sig: 5 },
    { src: 'Chang E8: two 30 mL portions', d: 83, vAq: 200, vOrg: 30, n: 2, q: 0.005527839582095328, published: 0.0055278, sig: 5 },
  ])('$src', ({ d, vAq, vOrg, n, q, published, sig }) => {
    expect(fractionRemaining(d, vAq, vOrg, n)).toBeCloseTo(q, 15);
    // The published answer, at the significant figures it was printed with.
    const halfUnit = 0.5 * 10 ** (Math.floor(Math.log10(published)) - sig + 1);
    expect(Math.abs(fractionRemaining(d, vAq, vOrg, n) - published)).toBeLessThanOrEqual(halfUnit * (1 + 1e-9));
    expect(extractionEfficiency(d, vAq, vOrg, n)).toBeCloseTo(1 - q, 15);
  });

  it('IUPAC Gold Book F02503: n = r = 1 gives E = D/(1 + D)', () => {
    for (const d of [0.1, 1, 3, 57.5]) expect(extractionEfficiency(d, 10, 10, 1)).toBeCloseTo(d / (1 + d), 15);
  });

  it('E = 1 (complete transfer) when no distribution ratio is known (DESIGN.md §4)', () => {
    expect(extractionEfficiency(NaN, 100, 10, 2)).toBe(1);
  });

  it('EPA 3510C geometry (E9, computed): 1 L sample, 3 × 60 mL, D = 60.69 gives 99 %', () => {
    expect(extractionEfficiency(60.69, 1000, 60, 3)).toBeCloseTo(0.99, 4);
    expect(extractionEfficiency(28.57, 1000, 60, 3)).toBeCloseTo(0.95, 4);
  });
});

describe('distribution ratio of ionisable analytes', () => {
  it.each([
    // Harvey §7.7 weak acid (E4): Ka = 1.00e-5, K_D = 3.00, 50 mL + 50 mL
    { src: 'Harvey E4 pH 3.00', k: 3, ph: 3, pka: 5, ab: 'acid' as const, d: 2.9702970297029703, e: 0.7481 },
    { src: 'Harvey E4 pH 5.00', k: 3, ph: 5, pka: 5, ab: 'acid' as const, d: 1.5, e: 0.6 },
  ])('$src', ({ k, ph, pka, ab, d, e }) => {
    expect(distributionRatio(k, ph, pka, ab)).toBeCloseTo(d, 12);
    expect(extractionEfficiency(distributionRatio(k, ph, pka, ab), 50, 50, 1)).toBeCloseTo(e, 4);
  });

  it.each([
    // Harris amine example (E5, numbers from memory): K = 3.0, Ka(BH+) = 1.0e-9 → pKa 9, 50 mL water, 100 mL solvent
    { src: 'Harris E5 pH 10.00', ph: 10, d: 2.727272727272727, caq: 1.549e-3 },
    { src: 'Harris E5 pH 8.00', ph: 8, d: 0.2727272727272727, caq: 6.471e-3 },
  ])('$src', ({ ph, d, caq }) => {
    const dr = distributionRatio(3.0, ph, 9, 'base');
    expect(dr).toBeCloseTo(d, 12);
    expect(0.01 * fractionRemaining(dr, 50, 100, 1)).toBeCloseTo(caq, 6);
  });

  it('justaaa worked problem (E6): K = 2.9, pKa 9, pH 7.0 → D = 0.029, 94.9 % left in water', () => {
    const d = distributionRatio(2.9, 7, 9, 'base');
    expect(d).toBeCloseTo(0.028713, 6);
    expect(fractionRemaining(d, 74, 137, 1)).toBeCloseTo(0.94953, 5);
  });

  it('benzoic acid D_ow at pKa equals K/2 (REFERENCES.md §7, computed: log 1.549 = log P − log 2)', () => {
    expect(Math.log10(distributionRatio(10 ** 1.85, 4.2, 4.2, 'acid'))).toBeCloseTo(1.549, 3);
  });

  it('neutral analytes: f = 1 whatever the pH', () => {
    expect(neutralFraction(NaN, NaN, 'neutral')).toBe(1);
    expect(distributionRatio(42, NaN, NaN, 'neutral')).toBe(42);
  });

  it('empty pH or pKa for an ionisable analyte gives an empty D', () => {
    expect(distributionRatio(3, NaN, 5, 'acid')).toBeNaN();
  });

  it.each([
    ['acid', 'acid'],
    [' Base ', 'base'],
    ['', 'neutral'],
    ['neutral', 'neutral'],
    ['salt', undefined],
  ])('reads acid/base text %j', (text, want) => {
    expect(parseAcidBase(text)).toBe(want);
  });
});

describe('pre-extraction concentration by mass balance', () => {
  it('REFERENCES.md §1: C0 = C_ext·V_ext/(V_sample·E) — 4.2 ng/mL in 1 mL from 100 mL at E = 0.92', () => {
    expect(preExtractionConc(4.2, { dilution: 1, finalVolume: 1, sampleVolume: 100, efficiency: 0.92 })).toBeCloseTo(
      (4.2 * 1) / (100 * 0.92),
      15,
    );
  });
  it('with complete transfer it is the plain concentration factor, times the dilution', () => {
    expect(preExtractionConc(250, { dilution: 2, finalVolume: 0.5, sampleVolume: 500, efficiency: 1 })).toBe(0.5);
  });
});
