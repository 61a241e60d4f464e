import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { compileMethod } from '../../src/engine/evaluate.js';
import { describeMethod } from '../../src/commands/method/describe.js';
import { parseMethod } from '../../src/method/load.js';
import { recalculateData } from '../../src/index.js';

/**
 * Issue 14, point 6: a calibration that includes the extraction. A worked example, from two
 * published relations:
 * - n extractions with V_org each leave (V_aq / (V_aq + D·V_org))^n of the analyte in the water
 *   (Nernst distribution law; Harris, Quantitative Chemical Analysis, "fraction remaining", from memory):
 *   500 mL, K = 10, two portions of 25 mL: (500 / 750)² = 4/9 remains, E = 5/9;
 * - sample concentration = extract concentration × final volume × dilution / sample volume, the
 *   external-standard relation with no recovery correction (US EPA SW-846 Method 8000D §11.10, from memory):
 *   100 ng/mL × 1 mL / 500 mL = 0.2 ng/mL.
 * Standards in solvent: divided by E, 0.2 / (5/9) = 0.36 ng/mL. Calibrators extracted: 0.2 ng/mL.
 */
const generic = readFileSync('templates/generic-lle.yaml', 'utf8');
const WITHOUT_E = 'extract_conc * dilution * final_volume / sample_volume';
const extracted = generic
  .replace('expr: extract_conc * dilution * final_volume / (sample_volume * extraction_efficiency_pct / 100)', `expr: ${WITHOUT_E}`)
  .replace('qc:\n  outlier_test', 'calibration:\n  includes_extraction: true\n\nqc:\n  outlier_test');
const worklist = [
  'sample_id,sample_type,analyte,extract_conc,sample_volume,solvent_volume,extractions,final_volume,dilution,partition_coeff',
  'W-1,sample,example,100,500,25,2,1,1,10',
].join('\n');

describe('calibration.includes_extraction', () => {
  it.each([
    ['standards in solvent (the default): corrected by E = 5/9', generic, 0.36],
    ['calibrators taken through the extraction: not corrected', extracted, 0.2],
  ])('%s', async (_what, text, expected) => {
    const method = parseMethod(text, { file: 'inline.yaml' });
    const result = await recalculateData(worklist, { method, name: 'w' });
    expect(result.computed.get('extraction_efficiency_pct')![0]).toBeCloseTo((5 / 9) * 100, 10);
    expect(result.computed.get('pre_extraction_conc')![0]).toBeCloseTo(expected, 12);
  });

  it('refuses a method that says the calibration includes the extraction and still divides by E', () => {
    const both = generic.replace('qc:\n  outlier_test', 'calibration:\n  includes_extraction: true\n\nqc:\n  outlier_test');
    const method = parseMethod(both, { file: 'inline.yaml' });
    expect(() => compileMethod(method)).toThrow(/formula "pre_extraction_conc" divides by the extraction efficiency, but the method says the calibration includes the extraction/);
  });

  it('finds the efficiency through another formula column too', () => {
    const indirect = extracted
      .replace(`expr: ${WITHOUT_E}`, 'expr: extract_conc * dilution * final_volume / (sample_volume * corrected_fraction)')
      .replace('  - name: pre_extraction_conc', '  - name: corrected_fraction\n    expr: extraction_efficiency_pct / 100\n  - name: pre_extraction_conc');
    expect(() => compileMethod(parseMethod(indirect, { file: 'inline.yaml' }))).toThrow(/divides by the extraction efficiency/);
  });

  it('method check says how results are calibrated, and warns about an uncorrected result with no declaration', () => {
    const say = (text: string) => {
      const m = parseMethod(text, { file: 'inline.yaml' });
      return describeMethod(m, compileMethod(m));
    };
    expect(say(generic)).toContain('calibration: standards not extracted (the default): pre_extraction_conc is corrected by the theoretical extraction efficiency E');
    expect(say(generic)).not.toContain('Warning: calibration');
    expect(say(extracted)).toContain('calibration: calibrators taken through the extraction');
    expect(say(extracted)).not.toContain('Warning: calibration');
    const undeclared = generic.replace('expr: extract_conc * dilution * final_volume / (sample_volume * extraction_efficiency_pct / 100)', `expr: ${WITHOUT_E}`);
    expect(say(undeclared)).toContain('Warning: calibration\n  pre_extraction_conc: the formula does not correct for the extraction efficiency');
  });
});
