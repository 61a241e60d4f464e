import { describe, expect, it } from 'vitest';
import { type ControlPoint, type WestgardRule, westgard } from '../../src/history/westgard.js';

// Rule definitions: Westgard, Barry, Hunt, Groth, Clin. Chem. 1981, 27, 493–501, as tabulated in
// REFERENCES.md §6 (J Assist Reprod Genet 2013 Table 1; Wikipedia "Westgard rules"). The series are
// hand-built around mean 100, sd 10, so ±1s = 90/110, ±2s = 80/120, ±3s = 70/130.
// Our choice: "beyond" a limit means strictly beyond; a value exactly on it does not count.
const LIMITS = { mean: 100, sd: 10 };

/** Each value in its own batch (b1, b2, …), so R-4s cannot pair them. */
function series(values: number[]): ControlPoint[] {
  return values.map((value, i) => ({ value, batchId: `b${i + 1}` }));
}

/** All values in one batch. */
function oneRun(values: number[]): ControlPoint[] {
  return values.map((value) => ({ value, batchId: 'b1' }));
}

function found(points: ControlPoint[]): [WestgardRule, number][] {
  return westgard(points, LIMITS).map((v) => [v.rule, v.index]);
}

const ten = (v: number) => Array.from({ length: 10 }, () => v);

describe('westgard', () => {
  it.each<[string, ControlPoint[], [WestgardRule, number][]]>([
    // 1-2s: a warning for one value beyond ±2s
    ['1-2s high', series([100, 121]), [['1-2s', 1]]],
    ['1-2s low', series([79]), [['1-2s', 0]]],
    ['exactly +2s is not beyond', series([120]), []],
    ['exactly −2s is not beyond', series([80]), []],
    // 1-3s: one value beyond ±3s (also beyond 2s, so 1-2s too)
    ['1-3s high', series([131]), [['1-2s', 0], ['1-3s', 0]]],
    ['1-3s low', series([69]), [['1-2s', 0], ['1-3s', 0]]],
    ['exactly +3s is only 1-2s', series([130]), [['1-2s', 0]]],
    // 2-2s: two consecutive beyond the same 2s limit, across runs
    ['2-2s high', series([125, 123]), [['1-2s', 0], ['1-2s', 1], ['2-2s', 1]]],
    ['2-2s low', series([100, 78, 79]), [['1-2s', 1], ['1-2s', 2], ['2-2s', 2]]],
    ['2-2s needs the same side', series([125, 75]), [['1-2s', 0], ['1-2s', 1]]],
    ['2-2s needs consecutive values', series([125, 105, 125]), [['1-2s', 0], ['1-2s', 2]]],
    ['2-2s: second exactly on +2s', series([125, 120]), [['1-2s', 0]]],
    [
      '2-2s reports at every completing point',
      series([125, 125, 125]),
      [['1-2s', 0], ['1-2s', 1], ['2-2s', 1], ['1-2s', 2], ['2-2s', 2]],
    ],
    // R-4s: within one run, one beyond +2s and another beyond −2s
    ['R-4s in one batch', oneRun([125, 75]), [['1-2s', 0], ['1-2s', 1], ['R-4s', 1]]],
    ['R-4s low first', oneRun([78, 100, 122]), [['1-2s', 0], ['1-2s', 2], ['R-4s', 2]]],
    ['R-4s not across batches', series([125, 75]), [['1-2s', 0], ['1-2s', 1]]],
    [
      'R-4s uses run over batchId',
      [
        { value: 125, batchId: 'b1', run: 'r1' },
        { value: 75, batchId: 'b1', run: 'r2' },
      ],
      [['1-2s', 0], ['1-2s', 1]],
    ],
    [
      'R-4s within a run spread over batches, not adjacent',
      [
        { value: 125, batchId: 'b1', run: 'r1' },
        { value: 100, batchId: 'b2', run: 'r2' },
        { value: 75, batchId: 'b3', run: 'r1' },
      ],
      [['1-2s', 0], ['1-2s', 2], ['R-4s', 2]],
    ],
    ['R-4s: one exactly on −2s', oneRun([125, 80]), [['1-2s', 0]]],
    ['R-4s: a range over 4s is not enough without both beyond 2s', oneRun([119, 75]), [['1-2s', 1]]],
    // 4-1s: four consecutive beyond the same 1s limit
    ['4-1s high', series([111, 112, 113, 114]), [['4-1s', 3]]],
    ['4-1s low', series([89, 88, 87, 86]), [['4-1s', 3]]],
    ['4-1s: one exactly on +1s', series([111, 112, 110, 114]), []],
    ['4-1s needs the same side', series([111, 112, 113, 89]), []],
    ['4-1s: only three', series([100, 111, 112, 113]), []],
    ['4-1s slides', series([111, 112, 113, 114, 115]), [['4-1s', 3], ['4-1s', 4]]],
    // 10-x: ten consecutive on the same side of the mean
    ['10-x high', series(ten(101)), [['10-x', 9]]],
    ['10-x low', series(ten(99)), [['10-x', 9]]],
    ['10-x: the tenth exactly at the mean', series([...ten(101).slice(0, 9), 100]), []],
    ['10-x needs the same side', series([...ten(101).slice(0, 9), 99]), []],
    ['10-x slides', series([...ten(101), 101]), [['10-x', 9], ['10-x', 10]]],
    // Empty values are not points
    ['empty values are skipped', series([111, 112, NaN, 113, 114]), [['4-1s', 4]]],
    ['in control', series([100, 95, 105, 110, 90, 119, 81]), []],
  ])('%s', (_name, points, expected) => {
    expect(found(points)).toEqual(expected);
  });

  it('fills in batch, value and severity, ordered by point then rule', () => {
    expect(westgard(series([112, 113, 114, 135]), LIMITS)).toEqual([
      { rule: '1-2s', index: 3, batchId: 'b4', value: 135, severity: 'warning' },
      { rule: '1-3s', index: 3, batchId: 'b4', value: 135, severity: 'reject' },
      { rule: '4-1s', index: 3, batchId: 'b4', value: 135, severity: 'reject' },
    ]);
  });

  it('sees several rules at once in a drifting series', () => {
    // Checked by hand: above +2s at 4 and 5 (1-2s, then 2-2s at 5); above +1s from index 3, so
    // 4-1s completes at 6 and again at 7, 8, 9; above the mean throughout, so 10-x at 9
    const drift = series([101, 102, 104, 111, 121, 122, 112, 113, 114, 115]);
    expect(found(drift)).toEqual([
      ['1-2s', 4],
      ['1-2s', 5],
      ['2-2s', 5],
      ['4-1s', 6],
      ['4-1s', 7],
      ['4-1s', 8],
      ['4-1s', 9],
      ['10-x', 9],
    ]);
  });

  it.each([
    ['sd 0', { mean: 100, sd: 0 }],
    ['negative sd', { mean: 100, sd: -1 }],
    ['sd NaN', { mean: 100, sd: NaN }],
    ['mean NaN', { mean: NaN, sd: 10 }],
  ])('judges nothing without usable limits (%s)', (_name, limits) => {
    expect(westgard(series([150, 150, 50]), limits)).toEqual([]);
  });

  it('returns nothing for an empty series', () => {
    expect(westgard([], LIMITS)).toEqual([]);
  });
});
