/**
 * The sample volume for a target MDL (figures/mdl-target.ts). The scaling is the mass balance
 * the module states (MDL in the sample ∝ 1 / sample volume at the same extract-level detection,
 * final volume and efficiency), checked by hand: 1000 mL × 0.02 / 0.01 = 2000 mL. The spike
 * level for the new determination is 2 to 10 times the estimated MDL (40 CFR 136 App. B Rev. 2,
 * section 2(a): "select a spiking level, typically 2 - 10 times the estimated MDL"). MDL_b has no such scaling, so a target at or under it is refused.
 */
import { describe, expect, it } from 'vitest';
import type { FigureEntry } from '../../src/figures/figures.js';
import { planMdlTarget } from '../../src/figures/mdl-target.js';
import type { BlanksRule } from '../../src/figures/mdl.js';

function entry(mdlS: number, mdlB: number, blanksRule: BlanksRule): FigureEntry {
  const mdl = blanksRule === 'not_applicable' ? mdlS : Math.max(mdlS, mdlB);
  return {
    method: 'surface-water',
    analyte: 'Quinoline',
    unit: 'ug/L',
    mdl: { mdlS, mdlB, mdl, nSpikes: 15, nBlanks: 30, blanksRule, moreSpikes: 0, moreBlanks: 0, reasons: [] },
  } as unknown as FigureEntry;
}

describe('planMdlTarget', () => {
  it.each([
    // mdlS, mdlB, rule, target, sample mL → outcome, needed mL, spike level
    [0.02, NaN, 'not_applicable', 0.01, 1000, 'scaled', 2000, [0.02, 0.1]],
    [0.02, 0.005, 'mean_plus_t_s', 0.01, 1000, 'scaled', 2000, [0.02, 0.1]],
    [0.03, 0.004, 'highest', 0.012, 250, 'scaled', 625, [0.024, 0.12]],
    [0.008, 0.002, 'highest', 0.01, 1000, 'met', null, null],
    [0.01, NaN, 'not_applicable', 0.01, 1000, 'met', null, null],
    [0.02, 0.012, 'mean_plus_t_s', 0.01, 1000, 'not_supported', null, null],
    [0.02, 0.03, 'highest', 0.01, 1000, 'not_supported', null, null],
  ] as const)('MDL_s %d, MDL_b %d (%s), target %d, %d mL: %s', (mdlS, mdlB, rule, target, v, outcome, needed, spike) => {
    const p = planMdlTarget(entry(mdlS, mdlB, rule), { target, sampleVolume: v });
    expect(p.outcome).toBe(outcome);
    if (needed === null) expect(p.neededSampleVolume).toBeNull();
    else expect(p.neededSampleVolume).toBeCloseTo(needed, 9);
    if (spike === null) expect(p.spikeLevel).toBeNull();
    else {
      expect(p.spikeLevel![0]).toBeCloseTo(spike[0], 12);
      expect(p.spikeLevel![1]).toBeCloseTo(spike[1], 12);
    }
    if (outcome === 'scaled') expect(p.assumptions.join('; ')).toContain('final volume / (sample volume × E)');
    if (outcome === 'not_supported') {
      expect(p.reasons).toEqual([
        `MDL_b ${mdlB} ug/L, from the method blanks, is at or above the target: blank contamination does not scale with the sample volume by any known factor, so no sample volume can be shown to reach it; find and lower the blanks' source first`,
      ]);
    }
  });
});
