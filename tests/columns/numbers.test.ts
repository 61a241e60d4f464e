import { describe, expect, it } from 'vitest';
import { decideFormat } from '../../src/columns/number-format.js';
import { parseNumberCell } from '../../src/columns/numbers.js';

const point = decideFormat([], { declared: { decimal_mark: '.' } });
const comma = decideFormat([], { declared: { decimal_mark: ',', grouping: '.' } });
const fmt = (decimalComma: boolean) => (decimalComma ? comma : point);

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
    expect(parseNumberCell(cell, fmt(decimalComma))).toEqual({ ok: true, value: want });
  });

  it.each([null, '', '   '])('%j is empty', (cell) => {
    const r = parseNumberCell(cell, point);
    expect(r.ok && Number.isNaN(r.value)).toBe(true);
  });

  it.each([
    ['abc', 'expected a number'],
    ['12 mL', 'expected a number'],
    ['Infinity', 'expected a finite number'],
    ['-inf', 'expected a finite number'],
    ['NaN', 'expected a finite number'],
    ['1e400', 'expected a number within the double-precision range'],
    ['0x10', 'expected a number'],
    // A decimal comma in a decimal-point file: refused, with its reading (issue 13).
    ['1,25', "expected a number with the file's decimal point; it would read 1.25 with a decimal comma: the method's number_format says otherwise: correct the cell, or the method"],
  ])('%j is refused: %s', (cell, reason) => {
    expect(parseNumberCell(cell, point)).toEqual({ ok: false, reason });
  });
});
