/**
 * The integrity digest over a workbook's canonical content (numbers to 15 significant digits,
 * formula cells as {"f":1}) and the column checks; the oracle is node's SHA-256 over the lines the
 * digest's description lists, worked here independently of canonical.ts.
 */
import { createHash } from 'node:crypto';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { canonicalNumber } from '../../../src/write/workbook/canonical.js';
import type { CellValue } from '../../../src/write/workbook/cells.js';
import { ColumnChecks, DIGEST_HEADER, IntegrityDigest, parseColumnChecks } from '../../../src/write/workbook/digest.js';

/** A small deterministic generator (a 32-bit linear congruential one; common practice), so failures repeat. */
function numbers(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}

/**
 * A number to 15 significant digits as digest 3 describes it: its shortest decimal text (ECMA-262
 * Number::toString) rounded half away from zero. Worked here on the digits of toString's text
 * (fixed or exponential), not as canonical.ts does it (toExponential and BigInt).
 */
function reference15(x: number): number {
  const text = String(Math.abs(x));
  const [mantissa, exp = '0'] = text.split('e');
  const [whole, fraction = ''] = mantissa!.split('.');
  let digits = (whole! + fraction).replace(/^0+/, '');
  const leadingZeros = (whole! + fraction).length - (whole! + fraction).replace(/^0+/, '').length;
  // Value = 0.digits × 10^point
  const point = whole!.length - leadingZeros + Number(exp);
  if (digits.length <= 15) return x === 0 ? 0 : x;
  const up = digits[15]! >= '5';
  const kept = digits.slice(0, 15).split('').map(Number);
  if (up) {
    let i = 14;
    while (i >= 0 && kept[i] === 9) kept[i--] = 0;
    if (i >= 0) kept[i]! += 1;
    else kept.unshift(1);
  }
  digits = kept.join('');
  const value = Number(`0.${digits}e${point + (kept.length > 15 ? 1 : 0)}`);
  return x < 0 ? -value : value;
}

describe('digest 3 (workbook format 4) and the column checks', () => {
  const random = numbers(7);
  const rows: CellValue[][] = [];
  for (let r = 0; r < 5_000; r++) {
    rows.push([`S-${r}`, random() * 1000, r % 5 === 0 ? null : 0.1 * r, Math.floor(random() * 1e6), 1.5, 0]);
  }
  const formulas = [false, false, false, false, true, true];

  it.each([
    [89.18202590278685, 89.1820259027869],
    [0.11800000000000001, 0.118],
    [999.9999999999999, 1000],
    [-1.0000000000000002e-7, -1e-7],
  ])('reference15(%s) is %s (checked by hand against the shortest text)', (x, want) => {
    expect(reference15(x)).toBe(want);
  });

  it('canonicalNumber agrees with it for any double and at 16-digit ties (its fast path included)', () => {
    fc.assert(
      fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), (x) => {
        expect(Object.is(canonicalNumber(x), reference15(x) === 0 ? 0 : reference15(x))).toBe(true);
      }),
      { numRuns: 5000 },
    );
    fc.assert(
      fc.property(fc.bigInt({ min: 10n ** 14n, max: 10n ** 15n - 1n }), fc.integer({ min: -20, max: 5 }), fc.boolean(), (k, e, minus) => {
        const x = Number(`${minus ? '-' : ''}${k}5e${e}`); // 16 digits ending in 5: the tie
        expect(canonicalNumber(x)).toBe(reference15(x));
      }),
      { numRuns: 3000 },
    );
  });

  it('hashes the described lines: numbers to 15 significant digits, formula cells as {"f":1}; input columns checked one by one', () => {
    // Three input columns from column B on (the Results sheet's leading columns come before its inputs).
    const checks = new ColumnChecks(3, 2);
    const digest = new IntegrityDigest();
    for (const row of rows) digest.addResultsRow(row, { formulas, columnChecks: checks });
    digest.addMethod('ab'.repeat(32), [['lcs', 70.00000000000001]]);
    digest.addTrends([]);
    const text = (v: CellValue) => (v === null || v === '' ? 'null' : typeof v === 'number' ? String(reference15(v)) : JSON.stringify(v));
    const lines = [DIGEST_HEADER];
    for (const row of rows) lines.push(`[${row.map((v, c) => (formulas[c] ? '{"f":1}' : text(v))).join(',')}]`);
    lines.push(`method ${'ab'.repeat(32)}`, '["lcs",70]', 'trends');
    expect(digest.hex()).toBe(createHash('sha256').update(lines.map((l) => `${l}\n`).join(''), 'utf8').digest('hex'));

    const expected = [1, 2, 3]
      .map((c) => `${'ABCD'[c]} ${createHash('sha256').update(rows.map((row) => `${text(row[c]!)}\n`).join(''), 'utf8').digest('hex').slice(0, 8)}`)
      .join(', ');
    const got = checks.text();
    expect(got).toBe(expected);
    expect(parseColumnChecks(got)?.get('C')).toBe(expected.split(', ')[1]!.slice(2));
    expect(parseColumnChecks(got)?.has('A')).toBe(false);
    expect(parseColumnChecks('A 1234')).toBeUndefined();
  });
});
