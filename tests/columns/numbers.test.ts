import { describe, expect, it } from 'vitest';
import { parseNumberCell } from '../../src/columns/numbers.js';

describe('reading a cell as a number (README "What a cell may hold")', () => {
  it.each([
    ['12.5', false, 12.5],
    [' 12.5 ', false, 12.5],
    ['+3', false, 3],
    ['-0.002', false, -0.002],
    ['1e3', false, 1000],
    ['1.5E-2', false, 0.015],
    ['.5', false, 0.5],
    ['5.', false, 5],
    ['1,25', true, 1.25],
    ['1.234,5', true, 1234.5],
    ['0,001', true, 0.001],
    [42, false, 42],
  ])('%j (decimal comma %s) → %s', (cell, decimalComma, want) => {
    expect(parseNumberCell(cell, decimalComma)).toEqual({ ok: true, value: want });
  });

  it.each([null, '', '   '])('%j is empty', (cell) => {
    const r = parseNumberCell(cell, false);
    expect(r.ok && Number.isNaN(r.value)).toBe(true);
  });

  it.each([
    ['abc', 'expected a number'],
    ['1,25', 'expected a number'], // a comma in a comma-decimal-point file is not a number
    ['12 mL', 'expected a number'],
    ['Infinity', 'expected a finite number'],
    ['-inf', 'expected a finite number'],
    ['NaN', 'expected a finite number'],
    ['1e400', 'expected a number within the double-precision range'],
    ['0x10', 'expected a number'],
  ])('%j is refused: %s', (cell, reason) => {
    expect(parseNumberCell(cell, false)).toEqual({ ok: false, reason });
  });
});
