import { describe, expect, it } from 'vitest';
import { isAbove, isAtOrAbove, isBelow } from '../../src/qc/compare.js';
import { formatRange, limitsFor } from '../../src/qc/limits.js';
import { genericMethod } from '../fixtures/qc/build.js';

describe('limitsFor with the generic method (DESIGN.md §5 defaults)', () => {
  const method = genericMethod();
  // 70–130 %: US EPA SW-846 Method 3535A §1.2; ±15 % (±20 % at LLOQ): ICH M10 / FDA BMV 2018; RPD ≤ 20 %: common practice.
  it.each([
    ['lcs', '', [70, 130], 20],
    ['lcsd', '', [70, 130], 20],
    ['ms', '', [70, 130], 20],
    ['msd', '', [70, 130], 20],
    ['dup', '', undefined, 20],
    ['qc', 'low', [85, 115], undefined],
    ['qc', 'high', [85, 115], undefined],
    ['qc', '', [85, 115], undefined],
    ['qc', 'lloq', [80, 120], undefined],
    ['qc', ' LLOQ ', [80, 120], undefined],
    ['sample', '', undefined, undefined],
    ['blank', '', undefined, undefined],
  ] as const)('%s at level "%s" → recovery %j, RPD max %j', (type, level, recovery, rpd) => {
    const lim = limitsFor(method, { sampleType: type, qcLevel: level });
    expect(lim.recovery).toEqual(recovery);
    expect(lim.rpdMax).toBe(rpd);
  });

  it('says where the limits came from', () => {
    expect(limitsFor(method, { sampleType: 'qc', qcLevel: 'lloq' }).origin).toBe('recovery from method qc at level lloq');
    expect(limitsFor(method, { sampleType: 'lcs', qcLevel: '' }).origin).toBe('recovery from method lcs; RPD from method lcs');
    expect(limitsFor(method, { sampleType: 'sample', qcLevel: '' }).origin).toBe('none');
  });
});

describe('limitsFor with analyte limits', () => {
  const method = genericMethod({
    append: [
      'analytes:',
      '  atrazine:',
      '    limits:',
      '      ms: { recovery: [60, 140] }',
      '      qc: { levels: { low: { recovery: [90, 110] } } }',
      '  d5-atrazine:',
      '    surrogate: true',
      '    limits:',
      '      surrogate: { recovery: [50, 150] }',
      '  d8-simazine:',
      '    surrogate: true',
    ].join('\n'),
  });
  const analyte = (name: string) => method.analytes.find((a) => a.name === name)!;

  it("takes the analyte's recovery first and the method's RPD where the analyte names none", () => {
    const lim = limitsFor(method, { analyte: analyte('atrazine'), sampleType: 'ms', qcLevel: '' });
    expect(lim.recovery).toEqual([60, 140]);
    expect(lim.rpdMax).toBe(20);
    expect(lim.origin).toBe('recovery from analyte atrazine ms; RPD from method ms');
  });

  it("takes the analyte's level limits, then the method's for other levels", () => {
    expect(limitsFor(method, { analyte: analyte('atrazine'), sampleType: 'qc', qcLevel: 'Low' }).recovery).toEqual([90, 110]);
    expect(limitsFor(method, { analyte: analyte('atrazine'), sampleType: 'qc', qcLevel: 'lloq' }).recovery).toEqual([80, 120]);
    expect(limitsFor(method, { analyte: analyte('atrazine'), sampleType: 'qc', qcLevel: 'mid' }).recovery).toEqual([85, 115]);
  });

  it.each(['sample', 'blank', 'lcs', 'ms', 'qc'] as const)('judges a surrogate on a %s row by the surrogate limits, without RPD', (type) => {
    expect(limitsFor(method, { analyte: analyte('d5-atrazine'), sampleType: type, qcLevel: '' })).toEqual({
      recovery: [50, 150],
      origin: 'recovery from analyte d5-atrazine surrogate',
    });
    expect(limitsFor(method, { analyte: analyte('d8-simazine'), sampleType: type, qcLevel: '' }).recovery).toEqual([70, 130]);
  });

  it('formats a range', () => {
    expect(formatRange([70, 130])).toBe('70–130 %');
  });
});

describe('compare: inclusive limits with a relative tolerance', () => {
  // [value, limit, isBelow, isAbove, isAtOrAbove]
  it.each([
    [70, 70, false, false, true],
    [69.99999999999999, 70, false, false, true], // 0.119/0.17 × 100 in binary
    [130.00000000000003, 130, false, false, true], // 0.117/0.09 × 100 in binary
    [20.000000000000007, 20, false, false, true], // RPD of 1.1 and 0.9 in binary
    [69.9999, 70, true, false, false],
    [130.0001, 130, false, true, true],
    [0, 0, false, false, true],
    [1e-10, 0, false, false, true], // absolute slack of 1e-9 near zero
    [-1e-8, 0, true, false, false],
  ])('%d against %d', (value, limit, below, above, atOrAbove) => {
    expect(isBelow(value, limit)).toBe(below);
    expect(isAbove(value, limit)).toBe(above);
    expect(isAtOrAbove(value, limit)).toBe(atOrAbove);
  });
});
