/**
 * The digest's number texts and its hashing in pieces. precision12 is a short way to
 * `toPrecision(12)` for integers, and IntegrityDigest caches texts per column and hands
 * the hash several lines at once; none of that may change a byte of what is hashed.
 * The oracle is ECMAScript's Number.prototype.toPrecision (ECMA-262, "Number.prototype.toPrecision")
 * and node's SHA-256 over the lines the digest's description lists.
 */
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import type { CellValue } from '../../../src/write/workbook/cells.js';
import { ColumnChecks, DIGEST_3_HEADER, DIGEST_HEADER, IntegrityDigest, parseColumnChecks, precision12 } from '../../../src/write/workbook/digest.js';

/** A small deterministic generator (a 32-bit linear congruential one; common practice), so failures repeat. */
function numbers(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}

describe('precision12', () => {
  // Expected texts worked by hand from ECMA-262's toPrecision algorithm (p = 12: fixed notation
  // while the exponent e is -6..11, a "." after e+1 digits; exponential otherwise).
  it.each([
    [0, '0.00000000000'],
    [-0, '0.00000000000'], // -0 is not < 0, so no sign
    [1, '1.00000000000'],
    [-1, '-1.00000000000'],
    [250, '250.000000000'],
    [-420, '-420.000000000'],
    [123456789012, '123456789012'],
    [999999999999, '999999999999'],
    [-999999999999, '-999999999999'],
    [1e12, '1.00000000000e+12'],
    [2 ** 53, '9.00719925474e+15'],
    [2.5, '2.50000000000'],
    [0.1, '0.100000000000'],
    [1e-7, '1.00000000000e-7'],
    [99.28880291306326, '99.2888029131'],
  ])('%d → %s', (x, expected) => {
    expect(precision12(x)).toBe(expected);
    expect(x.toPrecision(12)).toBe(expected); // the hand-worked text is the engine's too
  });

  it.each([NaN, Infinity, -Infinity])('%d as toPrecision writes it', (x) => {
    expect(precision12(x)).toBe(x.toPrecision(12));
  });

  it('agrees with toPrecision(12) on integers of every length, their neighbours and decimals', () => {
    const random = numbers(6);
    const xs: number[] = [];
    for (let digits = 1; digits <= 16; digits++) {
      const top = 10 ** digits;
      xs.push(top - 1, top, top + 1, -(top - 1), -top, top - 0.5, top / 3);
      for (let i = 0; i < 50; i++) xs.push(Math.floor(random() * top), -Math.floor(random() * top), random() * top);
    }
    const mismatches = xs.filter((x) => precision12(x) !== x.toPrecision(12));
    expect(mismatches).toEqual([]);
  });
});

/** The digest as its description says, one update over all the lines (digest.ts). */
function referenceDigest(rows: readonly CellValue[][], approximate: readonly boolean[], methodSha: string): string {
  const lines = [DIGEST_HEADER];
  for (const row of rows) {
    const texts = row.map((v, c) =>
      v === null || v === '' ? 'null' : typeof v === 'number' ? (approximate[c] ? v.toPrecision(12) : String(v)) : JSON.stringify(v),
    );
    lines.push(`[${texts.join(',')}]`);
  }
  lines.push(`method ${methodSha}`, 'trends');
  return createHash('sha256').update(lines.map((l) => `${l}\n`).join(''), 'utf8').digest('hex');
}

describe('IntegrityDigest over many Results rows', () => {
  // Columns: a few repeated values (cached), distinct decimals (cache switched off once full),
  // values repeated a few times each (cache full, but kept), integers, exact text and numbers.
  const random = numbers(42);
  const rows: CellValue[][] = [];
  for (let r = 0; r < 15_000; r++) {
    rows.push([
      [2.5, 4.6, 11.5, 250][r % 4]!,
      random() * 1000,
      Math.floor(r / 3) / 7,
      Math.floor(random() * 1e6),
      r % 9 === 0 ? '' : `S-${r} "x"`,
      random() * 100,
      r % 11 === 0 ? null : -r,
    ]);
  }
  const approximate = [true, true, true, true, false, false, true];

  it('hashes exactly the described lines', () => {
    const digest = new IntegrityDigest({ version: 2 });
    for (const row of rows) digest.addResultsRow(row, { formulas: [], approximate });
    digest.addMethod('ab'.repeat(32), []);
    digest.addTrends([]);
    expect(digest.hex()).toBe(referenceDigest(rows, approximate, 'ab'.repeat(32)));
  });

  it('changes when one number changes in its 12th significant digit', () => {
    const changed = rows.map((row) => [...row]);
    const before = changed[7000]![2] as number;
    changed[7000]![2] = before * (1 + 1e-11);
    expect((changed[7000]![2] as number).toPrecision(12)).not.toBe(before.toPrecision(12));
    const digest = new IntegrityDigest({ version: 2 });
    for (const row of changed) digest.addResultsRow(row, { formulas: [], approximate });
    digest.addMethod('ab'.repeat(32), []);
    digest.addTrends([]);
    const hex = digest.hex();
    expect(hex).toBe(referenceDigest(changed, approximate, 'ab'.repeat(32)));
    expect(hex).not.toBe(referenceDigest(rows, approximate, 'ab'.repeat(32)));
  });
});

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

  it('hashes the described lines: numbers to 15 significant digits, formula cells as {"f":1}; input columns checked one by one', () => {
    // Three input columns from column B on (the Results sheet's leading columns come before its inputs).
    const checks = new ColumnChecks(3, 2);
    const digest = new IntegrityDigest({ version: 3 });
    for (const row of rows) digest.addResultsRow(row, { formulas, approximate: [], columnChecks: checks });
    digest.addMethod('ab'.repeat(32), [['lcs', 70.00000000000001]]);
    digest.addTrends([]);
    const text = (v: CellValue) => (v === null || v === '' ? 'null' : typeof v === 'number' ? String(reference15(v)) : JSON.stringify(v));
    const lines = [DIGEST_3_HEADER];
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
