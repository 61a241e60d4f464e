import * as reference from 'mathjs';
import { describe, expect, it } from 'vitest';
import { parseExpression, unit } from '../src/mathjs.js';

/**
 * phasebook loads mathjs from its single-file build for start-up time. The
 * reference here is mathjs's own ESM entry (the general-purpose library the
 * formulas and units were checked against): the same trees, the same factors.
 */
describe('mathjs loaded from the single-file build agrees with the ESM entry', () => {
  it.each([
    'extract_conc * dilution * final_volume / (sample_volume * extraction_efficiency_pct / 100)',
    'surrogate ? recovery_pct(pre_extraction_conc, spike_conc, 0) : (sample_type == "ms" or sample_type == "msd") ? 1 : NaN',
    'rpd_pct(pre_extraction_conc, pair(pre_extraction_conc))',
    '-2.5e-3 + 10^(ph - pka) / (1 + 2 cm)',
    'not a and b or c <= 3',
    // Syntax whose node classes use subset, size and matrix when mathjs evaluates them (stand-ins in our parser).
    'x[2] + obj.prop - v[1:3] * w[end]',
    'm = [1, 2; 3, 4]',
    'f(x) = x^2; a.b[1] = 3',
  ])('parses %s into the same tree', (expr) => {
    const ours = parseExpression(expr);
    const theirs = reference.parse(expr);
    expect(JSON.stringify(ours)).toBe(JSON.stringify(theirs));
    expect(ours.toString()).toBe(theirs.toString());
  });

  it.each([
    ['uL', 'mL'],
    ['L', 'mL'],
    ['cc', 'uL'],
    ['ug/L', 'ng/mL'],
    ['mg/dL', 'g/L'],
    ['nmol/L', 'mol/L'],
  ])('converts %s to %s with the same factor', (from, to) => {
    expect(unit(1, from).toNumber(to)).toBe(reference.unit(1, from).toNumber(to));
  });

  it('a formula cannot reach code: evaluate, import and createUnit are disabled on the instance', () => {
    // The tree's own evaluate() runs on phasebook's instance: the disabled functions throw there.
    expect(() => parseExpression('evaluate("1+1")').evaluate()).toThrow(/disabled/);
    expect(() => parseExpression('import({}, {})').evaluate()).toThrow(/disabled/);
    expect(() => parseExpression('createUnit("foo")').evaluate()).toThrow(/disabled/);
  });

  it('is configured predictable: sqrt(-1) is NaN, not a complex number', () => {
    expect(parseExpression('sqrt(-1)').evaluate()).toBeNaN();
  });
});
