import { describe, expect, it } from 'vitest';
import { ColumnBuilder, estimateRows } from '../../src/read/column-builder.js';

describe('column builder: sized up front, repeated cells shared, trimmed at the end', () => {
  it('keeps numbers as numbers and shares repeated text when a reader sets cells of either kind (XLSX)', () => {
    const b = new ColumnBuilder(2);
    const rows = [
      ['S1', 12.5],
      ['S1', null],
      [' 7 ', -0],
      ['S1', 0.1],
    ] as const;
    rows.forEach((r, i) => r.forEach((cell, c) => b.setCell(c, i, cell)));
    const cols = b.finish(rows.length);
    expect(cols).toEqual([
      ['S1', 'S1', ' 7 ', 'S1'],
      [12.5, null, -0, 0.1],
    ]);
    expect(Object.is(cols[1]![2], -0)).toBe(true); // the number itself, not its text
  });

  it.each([
    ['the estimate is exact', 4],
    ['more rows than expected', 1],
    ['fewer rows than expected', 100],
    ['no estimate', 0],
  ])('keeps every cell when %s', (_why, expectedRows) => {
    const b = new ColumnBuilder(3, { expectedRows });
    const rows = [
      ['S1', 'sample', '1.5'],
      ['S1', 'sample', null],
      ['S2', 'blank', '1.5'],
      ['S3', 'sample', ''],
    ] as const;
    rows.forEach((r, i) => r.forEach((cell, c) => b.set(c, i, cell)));
    const cols = b.finish(rows.length);
    expect(cols).toEqual([
      ['S1', 'S1', 'S2', 'S3'],
      ['sample', 'sample', 'blank', 'sample'],
      ['1.5', null, '1.5', ''],
    ]);
    for (const col of cols) {
      expect(col).toHaveLength(4);
      expect(Object.keys(col)).toEqual(['0', '1', '2', '3']); // no holes left behind
    }
  });

  it('a column with many different values (ids, results) is kept exactly', () => {
    const n = 30_000; // past the number of distinct values a column shares
    const b = new ColumnBuilder(2, { expectedRows: n });
    for (let r = 0; r < n; r++) {
      b.set(0, r, `ID-${r}`);
      b.set(1, r, String(r % 7));
    }
    const [ids, mod] = b.finish(n);
    expect(ids!.every((v, r) => v === `ID-${r}`)).toBe(true);
    expect(mod!.every((v, r) => v === String(r % 7))).toBe(true);
  });
});

describe('row estimate from the head of a file', () => {
  const line = 'a,b,c,1.25\n'; // 11 bytes
  it.each([
    ['the head is the whole file: its lines (+1 for a last line without LF)', 110, line.repeat(10), true, 11],
    ['a head of 10 lines of a 1100-byte file: about 100 rows, a little more', 1100, line.repeat(10), false, Math.ceil(100 * 1.02) + 16],
    ['no line break in the head: no estimate', 1_000_000, 'a'.repeat(1000), false, 0],
  ])('%s', (_why, bytes, head, complete, want) => {
    expect(estimateRows(bytes, head, { complete })).toBe(want);
  });

  it('counts bytes, not characters, for non-ASCII text', () => {
    const utf8Line = 'µL,ä\n'; // 7 bytes, 5 characters
    expect(estimateRows(700, utf8Line.repeat(10), { complete: false })).toBe(Math.ceil(100 * 1.02) + 16);
  });
});
