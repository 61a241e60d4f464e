/**
 * Shared formulas as a cell of their range reads them (ECMA-376 Part 1, §18.3.1.40): relative
 * references move by the cell's offset from the first cell, "$" parts stay, text constants,
 * quoted sheet names and function names (LOG10) are not references. Expected texts: what
 * copying the formula to that cell gives in a spreadsheet program (common practice).
 */
import { describe, expect, it } from 'vitest';
import { shiftFormula } from '../../src/verify/shared-formula.js';

describe('shiftFormula', () => {
  it.each([
    ['IF(G2="","",G2)', 5, 0, 'IF(G7="","",G7)'],
    ['Method!$I$24*Q2', 3, 0, 'Method!$I$24*Q5'],
    ['$A2+B$2', 1, 2, '$A3+D$2'],
    ['LOG10(B2)&"B2"', 1, 0, 'LOG10(B3)&"B2"'],
    ["'Sheet A1'!B2", 2, 0, "'Sheet A1'!B4"],
    ['SUM(A2:A9)', 0, 1, 'SUM(B2:B9)'],
  ])('%j moved %i rows and %i columns is %j', (f, rows, columns, want) => {
    expect(shiftFormula(f, rows, columns)).toBe(want);
  });

  it('a reference moved past the sheet edge gives undefined', () => {
    expect(shiftFormula('A2', -2, 0)).toBeUndefined();
  });
});
