/**
 * src/mathjs.ts converts units with an instance of mathjs of its own, whose `pow`
 * is mathjs's rule for two numbers and whose `fix`, `round` and `equal` are
 * stand-ins (building mathjs's own was most of a run's first unit). Checked
 * against the reference library itself, mathjs's full default instance: every
 * pair of the unit texts below converts to the same number, or fails with the
 * same message, and has the same dimension, as there.
 */
import { createRequire } from 'node:module';
import type * as MathJs from 'mathjs';
import { describe, expect, it } from 'vitest';
import { unit } from '../../src/mathjs.js';

const full = createRequire(import.meta.url)('mathjs/lib/browser/math.js') as MathJs.MathJsInstance;

// Volumes, mass and molar concentrations as methods and headers write them, spellings mathjs reads
// in other ways (l, litre, cc), powers (cm^3, m^-3 through kg/m^3), and units outside the trade.
const TEXTS = [
  'mL', 'uL', 'L', 'nL', 'dL', 'kL', 'cm^3', 'dm^3', 'mm^3', 'm^3', 'cc', 'l', 'litre', 'gallon', 'floz',
  'g/L', 'mg/L', 'ug/L', 'ng/L', 'pg/L', 'ng/mL', 'ug/mL', 'mg/mL', 'pg/mL', 'ng/uL', 'kg/m^3', 'mg/dL', 'g/cm^3',
  'mol/L', 'mmol/L', 'umol/L', 'nmol/L', 'pmol/L', 'mol/m^3', 'mmol/mL',
  'g', 'm', 'degC', 'ML', 'kg m^-3',
];

const outcome = (f: () => unknown): unknown => {
  try {
    return f();
  } catch (err) {
    return `error: ${(err as Error).message}`;
  }
};

describe("unit conversion with phasebook's mathjs instance", () => {
  it.each(TEXTS)('%s converts to every other unit text as mathjs itself converts it', (from) => {
    for (const to of TEXTS) {
      const ours = outcome(() => unit(1, from).toNumber(to));
      const reference = outcome(() => full.unit(1, from).toNumber(to));
      expect(ours, `${from} → ${to}`).toEqual(reference);
      expect(outcome(() => unit(1, from).equalBase(unit(1, to))), `${from} ~ ${to}`).toEqual(outcome(() => full.unit(1, from).equalBase(full.unit(1, to))));
    }
  });

  it('converts values other than 1 the same way (2.5 ng/mL in ug/L, 40 uL in mL, 0.2 mmol/L in umol/L)', () => {
    for (const [value, from, to] of [
      [2.5, 'ng/mL', 'ug/L'],
      [40, 'uL', 'mL'],
      [0.2, 'mmol/L', 'umol/L'],
    ] as const) {
      expect(unit(value, from).toNumber(to)).toBe(full.unit(value, from).toNumber(to));
    }
  });

  it('says so when a unit would need what it does not build: splitting a unit into parts', () => {
    expect(() => unit(1.5, 'L').splitUnit(['L', 'mL'])).toThrow(/^(fix|round|equal) is not available to unit conversion$/);
  });
});
