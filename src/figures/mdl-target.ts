/**
 * Planning with the detection limit (issue 16, point 4): given the present MDL of an analyte
 * (figures.ts, 40 CFR 136 Appendix B Rev. 2) and a target, the sample volume that would bring
 * it under the target, where the procedure and a stated assumption support it, and the words
 * why not where they do not.
 *
 * The assumption (a mass balance, not the procedure's): the MDL in the sample is the extract's
 * detection times final volume / (sample volume × E). With the same final volume, the same
 * efficiency (the solvent scaled with the sample) and the same detection in the extract, the
 * MDL from the spiked samples, MDL_s, scales as 1 / sample volume. The procedure itself says
 * nothing of the kind: it asks for the MDL to be determined again when the method changes in a
 * way that can change its sensitivity (Rev. 2, ongoing data collection; from memory), and a new
 * sample volume is such a change. So the answer is an estimate to plan that determination, with
 * the spike level for it: typically 2 to 10 times the estimated MDL (Rev. 2, section 2(a), the
 * procedure's own words for an initial determination).
 *
 * The MDL from the method blanks, MDL_b, has no such scaling: blank contamination comes from
 * reagents, glassware and the lab, not in proportion to the sample. Where MDL_b is at or above
 * the target, no sample volume can be shown to reach it, and the plan says so.
 */
import type { FigureEntry } from './figures.js';

/** The spike level the procedure suggests for a determination: this many times the estimated MDL (Rev. 2, section 2(a)). */
export const SPIKE_TIMES_MDL: readonly [number, number] = [2, 10];

export interface MdlTargetPlan {
  method: string;
  analyte: string;
  unit: string;
  target: number;
  mdl: number;
  mdlS: number;
  /** NaN when MDL_b does not apply. */
  mdlB: number;
  sampleVolume: number;
  /** met: the MDL is already at or under the target; scaled: a larger sample is estimated to reach it; not_supported: see reasons. */
  outcome: 'met' | 'scaled' | 'not_supported';
  /** The sample volume (mL) estimated to bring MDL_s to the target; null unless scaled. */
  neededSampleVolume: number | null;
  /** The spike level range for the new determination, in the MDL's unit; null unless scaled. */
  spikeLevel: [number, number] | null;
  assumptions: string[];
  reasons: string[];
}

/** The plan for a target MDL from one figure entry with an MDL; `sampleVolume` in mL. */
export function planMdlTarget(entry: FigureEntry, options: { target: number; sampleVolume: number }): MdlTargetPlan {
  const { target, sampleVolume } = options;
  const m = entry.mdl;
  const mdlB = m.blanksRule === 'not_applicable' ? NaN : m.mdlB;
  const base = { method: entry.method, analyte: entry.analyte, unit: entry.unit, target, mdl: m.mdl, mdlS: m.mdlS, mdlB, sampleVolume };
  const assumptions = [
    'the MDL in the sample = the detection in the extract × final volume / (sample volume × E) (a mass balance)',
    'the same final volume, the same extraction efficiency (solvent scaled with the sample) and the same detection in the extract',
  ];
  if (m.mdl <= target) {
    return { ...base, outcome: 'met', neededSampleVolume: null, spikeLevel: null, assumptions: [], reasons: [] };
  }
  if (Number.isFinite(mdlB) && mdlB >= target) {
    return {
      ...base,
      outcome: 'not_supported',
      neededSampleVolume: null,
      spikeLevel: null,
      assumptions: [],
      reasons: [
        `MDL_b ${short(mdlB)} ${entry.unit}, from the method blanks, is at or above the target: blank contamination does not scale with the sample volume by any known factor, so no sample volume can be shown to reach it; find and lower the blanks' source first`,
      ],
    };
  }
  const needed = (sampleVolume * m.mdlS) / target;
  return {
    ...base,
    outcome: 'scaled',
    neededSampleVolume: needed,
    spikeLevel: [SPIKE_TIMES_MDL[0] * target, SPIKE_TIMES_MDL[1] * target],
    assumptions,
    reasons: [],
  };
}

function short(x: number): string {
  return String(Number(x.toPrecision(4)));
}
