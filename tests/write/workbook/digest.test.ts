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
import { DIGEST_HEADER, IntegrityDigest, precision12 } from '../../../src/write/workbook/digest.js';

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
    const digest = new IntegrityDigest();
    for (const row of rows) digest.addResultsRow(row, approximate);
    digest.addMethod('ab'.repeat(32), []);
    digest.addTrends([]);
    expect(digest.hex()).toBe(referenceDigest(rows, approximate, 'ab'.repeat(32)));
  });

  it('changes when one number changes in its 12th significant digit', () => {
    const changed = rows.map((row) => [...row]);
    const before = changed[7000]![2] as number;
    changed[7000]![2] = before * (1 + 1e-11);
    expect((changed[7000]![2] as number).toPrecision(12)).not.toBe(before.toPrecision(12));
    const digest = new IntegrityDigest();
    for (const row of changed) digest.addResultsRow(row, approximate);
    digest.addMethod('ab'.repeat(32), []);
    digest.addTrends([]);
    const hex = digest.hex();
    expect(hex).toBe(referenceDigest(changed, approximate, 'ab'.repeat(32)));
    expect(hex).not.toBe(referenceDigest(rows, approximate, 'ab'.repeat(32)));
  });
});
