import { evaluate as referenceEvaluate } from 'mathjs';
import { describe, expect, it } from 'vitest';
import { compileFormula, FormulaError, type EvalContext, type SymbolKind } from '../../src/engine/formula.js';
import { recoveryPct, rpdPct } from '../../src/formula-functions.js';

const symbols = new Map<string, SymbolKind>([
  ['a', 'number'],
  ['b', 'number'],
  ['c', 'number'],
  ['sample_type', 'text'],
  ['acid_base', 'text'],
]);

function ctxOf(numbers: Record<string, number[]>, texts: Record<string, string[]> = {}, links?: { parent?: number[]; pair?: number[] }): EvalContext {
  const n = Object.values(numbers)[0]?.length ?? Object.values(texts)[0]?.length ?? 1;
  return {
    number: (name) => (numbers[name] ? Float64Array.from(numbers[name]!) : undefined),
    text: (name) => texts[name],
    parentRow: Int32Array.from(links?.parent ?? new Array(n).fill(-1)),
    pairRow: Int32Array.from(links?.pair ?? new Array(n).fill(-1)),
  };
}

function run(expr: string, numbers: Record<string, number[]>, texts: Record<string, string[]> = {}, links?: { parent?: number[]; pair?: number[] }) {
  const f = compileFormula({ name: 'x', expr }, symbols);
  const row = f.bind(ctxOf(numbers, texts, links));
  const n = Object.values(numbers)[0]?.length ?? 1;
  return Array.from({ length: n }, (_, r) => row(r));
}

describe('arithmetic agrees with mathjs itself (a general-purpose reference library)', () => {
  it.each([
    '-2^2',
    '2^3^2',
    'a / (b * c)',
    'a - (b - c)',
    'a * b + c / 4 - 1.5e-3',
    'sqrt(a) + log(b) + log10(c) + exp(1) + abs(-a)',
    'log(a, 2)',
    'pow(a, 0.5)',
    'min(a, b, c) + max(a, b)',
    'a > b ? a : b',
    'a == b or c > 1',
    'not (a < b) and true',
    'round(a * 1000) / 1000 + floor(b) + ceil(c)',
  ])('%s', (expr) => {
    const scope = { a: 7.25, b: 3, c: 0.4 };
    const got = run(expr, { a: [scope.a], b: [scope.b], c: [scope.c] })[0];
    const want = referenceEvaluate(expr, { ...scope });
    expect(got).toBeCloseTo(typeof want === 'boolean' ? (want ? 1 : 0) : (want as number), 12);
  });
});

describe('empty cells (NaN) pass through, never crash', () => {
  it.each([
    ['a + b', NaN],
    ['if_empty(a, 5)', 5],
    ['min(a, 1)', NaN],
    // An empty base empties a power too, as the workbook's formula does (JavaScript's and mathjs's NaN^0 is 1).
    ['a^0', NaN],
    ['pow(a, 0)', NaN],
  ])('%s with a empty gives %s', (expr, want) => {
    const got = run(expr, { a: [NaN], b: [1] })[0];
    if (Number.isNaN(want)) expect(got).toBeNaN();
    else expect(got).toBe(want);
  });

  // Comparisons and truth with an empty number follow mathjs itself (the reference library):
  // a comparison is false, != is true, an empty condition takes the false branch.
  it.each(['a > b', 'a == b', 'a != b', 'a <= b', 'a > b ? 1 : 2', 'a ? 1 : 2', 'not a', 'a and b', 'a or b', 'b or a', 'not (a < b) and b'])(
    '%s with a empty agrees with mathjs',
    (expr) => {
      const got = run(expr, { a: [NaN], b: [1] })[0];
      const want = referenceEvaluate(expr, { a: NaN, b: 1 }) as number | boolean;
      expect(got).toBe(typeof want === 'boolean' ? (want ? 1 : 0) : want);
    },
  );

  it('a division by zero is Infinity here; the evaluator turns it into an empty cell', () => {
    expect(run('a / b', { a: [1], b: [0] })[0]).toBe(Infinity);
  });
});

describe('text columns and the trade functions', () => {
  it('compares text without case or surrounding spaces', () => {
    expect(run('sample_type == "ms"', { a: [0, 0] }, { sample_type: ['ms', ' MSD '] })).toEqual([1, 0]);
  });

  it('distribution_ratio reads acid/base text (Harvey §7.7 weak acid, REFERENCES.md E4: D = 1.500 at pH = pKa)', () => {
    const got = run('distribution_ratio(a, b, c, acid_base)', { a: [3, 3], b: [5, 3], c: [5, 5] }, { acid_base: ['acid', 'acid'] });
    expect(got[0]).toBeCloseTo(1.5, 12);
    expect(got[1]).toBeCloseTo(2.9702970297, 9);
  });

  it('extraction_efficiency (Harris E1(b): 99.902 % for five 100 mL portions, K = 3, 100 mL)', () => {
    expect(run('extraction_efficiency(a, b, c, 5) * 100', { a: [3], b: [100], c: [100] })[0]).toBeCloseTo(99.90234375, 10);
  });

  it('recovery_pct and rpd_pct (US EPA SW-846 forms; REFERENCES.md §2 constructed MS/MSD check)', () => {
    expect(recoveryPct(22.6, 20.0, 4.2)).toBeCloseTo(92.0, 12);
    expect(recoveryPct(24.1, 20.0, 4.2)).toBeCloseTo(99.5, 12);
    expect(rpdPct(22.6, 24.1)).toBeCloseTo(6.424, 3);
    expect(rpdPct(92.0, 99.5)).toBeCloseTo(7.833, 3);
    expect(recoveryPct(13, 10, 0)).toBe(130); // multiply first: exactly at the limit
  });

  it('parent() and pair() read a finished column in another row', () => {
    const got = run('a - parent(a) + pair(b)', { a: [10, 15, 1], b: [0, 0, 100] }, {}, { parent: [-1, 0, -1], pair: [-1, 2, -1] });
    expect(got[0]).toBeNaN();
    expect(got[1]).toBe(105);
    expect(got[2]).toBeNaN();
  });

  it('records its dependencies, cross-row ones included', () => {
    const f = compileFormula({ name: 'x', expr: 'a + parent(b) * 2' }, symbols);
    expect(f.dependencies.sort()).toEqual(['a', 'b']);
  });
});

describe('formulas that are refused (the sandbox)', () => {
  it.each([
    ['import({x: 1})', 'the function "import" is not allowed'],
    ['createUnit("foo")', 'the function "createUnit" is not allowed'],
    ['evaluate("1+1")', 'the function "evaluate" is not allowed'],
    ['parse("1")', 'the function "parse" is not allowed'],
    ['compile("1")', 'the function "compile" is not allowed'],
    ['simplify("x")', 'the function "simplify" is not allowed'],
    ['derivative("x^2", "x")', 'the function "derivative" is not allowed'],
    ['resolve(a)', 'the function "resolve" is not allowed'],
    ['f(x) = x', 'defining a function is not allowed in a formula'],
    ['a = 3', 'assignment (=) is not allowed in a formula'],
    ['a.constructor', 'property or index access (. or []) is not allowed in a formula'],
    ['sqrt["constructor"]', 'property or index access (. or []) is not allowed in a formula'],
    ['[1, 2]', 'a matrix or list ([]) is not allowed in a formula'],
    ['{a: 1}', 'an object literal ({}) is not allowed in a formula'],
    ['a; b', 'a block of several statements (; or newline) is not allowed in a formula'],
    ['zeros(3000, 3000)', 'the function "zeros" is not allowed'],
    ['10 % 3', 'the operator "%" is not allowed (write a percentage as /100)'],
    ['mod(10, 3)', 'the function "mod" is not allowed'],
    ['unknown_col + 1', 'unknown name "unknown_col"'],
    ['sqrt', '"sqrt" is a function; call it with arguments'],
    ['sqrt(1, 2)', 'sqrt() takes 1 argument, got 2'],
    ['parent(a + 1)', 'parent() takes the name of a column, got "a + 1"'],
    ['(a', 'cannot parse the formula: Parenthesis ) expected (char 3)'],
  ])('%s', (expr, message) => {
    expect(() => compileFormula({ name: 'x', expr }, symbols)).toThrow(new FormulaError(message));
  });

  it('refuses nesting without end and very long expressions', () => {
    const deep = '('.repeat(5000) + 'a' + ')'.repeat(5000);
    expect(() => compileFormula({ name: 'x', expr: deep }, symbols)).toThrow(FormulaError);
    const long = Array.from({ length: 2400 }, () => 'a').join(' + '); // 9597 characters, under the text cap
    expect(() => compileFormula({ name: 'x', expr: long }, symbols)).toThrow(/more than 2000 parts|nested more than/);
    const huge = Array.from({ length: 3000 }, () => 'a').join(' + ');
    expect(() => compileFormula({ name: 'x', expr: huge }, symbols)).toThrow(/^the formula is 11997 characters long; expected at most 10000$/);
  });
});
