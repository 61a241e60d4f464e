import { describe, expect, it } from 'vitest';
import { conversionFactor, normaliseUnitText, splitHeaderUnit, unitKind } from '../../src/columns/units.js';

// Expected factors are SI definitions (1 L = 1000 mL, 1 µg = 1000 ng; BIPM SI Brochure, 9th ed., from memory).
describe('unit conversion factors', () => {
  it.each([
    ['L', 'mL', 1000],
    ['uL', 'mL', 0.001],
    ['µL', 'mL', 0.001],
    ['μL', 'mL', 0.001],
    ['cm^3', 'mL', 1],
    ['cm3', 'mL', 1],
    ['dm^3', 'mL', 1000],
    ['mL', 'mL', 1],
    ['ng/L', 'ng/mL', 0.001],
    ['ug/L', 'ng/mL', 1],
    ['µg/L', 'ng/mL', 1],
    ['ug/mL', 'ng/mL', 1000],
    ['mg/L', 'ng/mL', 1000],
    ['pg/mL', 'ng/mL', 0.001],
    ['ng/mL', 'ug/L', 1],
    ['cc', 'uL', 1000],
  ])('%s → %s is × %s', (from, to, factor) => {
    // exactly: SI factors are exact decimals, and the binary noise mathjs leaves is rounded away
    expect(conversionFactor(from, to)).toBe(factor);
  });

  it('molar to mass concentration with the molar mass: 1 nmol/L of a 200 g/mol analyte is 0.2 ng/mL', () => {
    expect(conversionFactor('nmol/L', 'ng/mL', { molarMass: 200 })).toBeCloseTo(0.2, 12);
    expect(conversionFactor('nM', 'ng/mL', { molarMass: 200 })).toBeCloseTo(0.2, 12);
    expect(conversionFactor('ng/mL', 'nmol/L', { molarMass: 200 })).toBeCloseTo(5, 12);
  });

  it.each([
    ['nmol/L', 'ng/mL', {}, `converting "nmol/L" to "ng/mL" needs the analyte's molar mass`],
    ['mL', 'ng/mL', {}, 'cannot convert "mL" (a volume) to "ng/mL" (a mass concentration)'],
    ['furlong', 'mL', {}, '"furlong" is not a unit phasebook can convert'],
  ])('%s → %s is refused', (from, to, opts, message) => {
    expect(() => conversionFactor(from, to, opts)).toThrow(message);
  });

  it.each([
    ['mL', 'volume'],
    ['ng/mL', 'mass_concentration'],
    ['uM', 'molar_concentration'],
    ['furlong', undefined],
  ])('unitKind(%s)', (u, kind) => {
    expect(unitKind(u)).toBe(kind);
  });

  it('units are case-sensitive: ML is a megalitre, not a millilitre (LIBRARY-NOTES.md §1)', () => {
    expect(conversionFactor('ML', 'mL')).toBeCloseTo(1e9, 3);
  });
});

describe('units in headers', () => {
  it.each([
    ['sample_volume [L]', { name: 'sample_volume', unit: 'L' }],
    ['extract_conc [ug/mL]', { name: 'extract_conc', unit: 'ug/mL' }],
    ['Vol (mL)', { name: 'Vol', unit: 'mL' }],
    ['sample_volume', { name: 'sample_volume' }],
    ['[odd]', { name: '[odd]' }],
  ])('%s', (header, want) => {
    expect(splitHeaderUnit(header)).toEqual(want);
  });
});

describe('units as labs type them (issue 13)', () => {
  // SI Brochure, 9th ed. (BIPM 2019): 1 cm³ = 1 mL, 1 dm³ = 1 L, µ = 10⁻⁶; mcg is the clinical spelling of µg
  // (common practice). mathjs (the reference library) computes the factors.
  it.each([
    ['cm³', 'mL', 1],
    ['dm³', 'L', 1],
    ['µL', 'uL', 1], // micro sign U+00B5
    ['μL', 'uL', 1], // Greek mu U+03BC
    ['ml', 'mL', 1],
    ['mcg/L', 'ug/L', 1],
    ['ng / mL', 'ng/mL', 1],
    ['ng / ml', 'ug/L', 1],
    ['cm³', 'uL', 1000],
  ])('%s is %s × %d', (from, to, factor) => {
    expect(conversionFactor(from, to)).toBe(factor);
  });

  it.each([
    ['cm³', 'cm^3'],
    ['dm²', 'dm^2'],
    [' µg / mL ', 'ug/mL'],
    ['μL', 'uL'],
  ])('normaliseUnitText(%j) is %j', (text, want) => {
    expect(normaliseUnitText(text)).toBe(want);
  });
});
