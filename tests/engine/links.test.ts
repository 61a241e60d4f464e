import { describe, expect, it } from 'vitest';
import type { SampleType } from '../../src/domain/fields.js';
import { findLinks } from '../../src/engine/links.js';

function table(rows: Array<[id: string, type: SampleType, parent: string, analyte: string, batch: string]>) {
  return {
    rowCount: rows.length,
    sampleId: rows.map((r) => r[0]),
    sampleType: rows.map((r) => r[1]),
    parentId: rows.map((r) => r[2]),
    analyte: rows.map((r) => r[3]),
    batchId: rows.map((r) => r[4]),
  };
}

describe('cross-row links (DESIGN.md §4–5)', () => {
  it('ms, msd and dup find their native sample of the same analyte; msd pairs with the ms, dup with the parent', () => {
    const t = table([
      ['S1', 'sample', '', 'x', 'B1'],
      ['S1', 'sample', '', 'y', 'B1'],
      ['S1-MS', 'ms', 'S1', 'x', 'B1'],
      ['S1-MSD', 'msd', 'S1', 'x', 'B1'],
      ['S1-DUP', 'dup', 'S1', 'y', 'B1'],
    ]);
    const l = findLinks(t);
    expect([...l.parentRow]).toEqual([-1, -1, 0, 0, 1]);
    expect([...l.pairRow]).toEqual([-1, -1, -1, 2, 1]);
    expect([...l.noParent]).toEqual([0, 0, 0, 0, 0]);
  });

  it('NO_PARENT when the parent is missing, of another analyte, not a sample row, or not named', () => {
    const t = table([
      ['S1', 'sample', '', 'x', 'B1'],
      ['BLK', 'blank', '', 'y', 'B1'],
      ['A', 'ms', 'S1', 'y', 'B1'],
      ['B', 'msd', 'NOPE', 'x', 'B1'],
      ['C', 'dup', 'BLK', 'y', 'B1'],
      ['D', 'ms', '', 'x', 'B1'],
    ]);
    const l = findLinks(t);
    expect([...l.noParent]).toEqual([0, 0, 1, 1, 1, 1]);
    expect([...l.pairRow]).toEqual([-1, -1, -1, -1, -1, -1]); // no RPD without a native sample
  });

  it('an msd whose parent is missing is not paired with an ms of the same parent_id', () => {
    const t = table([
      ['X-MS', 'ms', 'GONE', 'x', 'B1'],
      ['X-MSD', 'msd', 'GONE', 'x', 'B1'],
    ]);
    expect([...findLinks(t).pairRow]).toEqual([-1, -1]);
  });

  it('lcsd pairs with the lcs it names, or the only lcs of its analyte in the batch', () => {
    const t = table([
      ['L1', 'lcs', '', 'x', 'B1'],
      ['L1D', 'lcsd', 'L1', 'x', 'B1'],
      ['L2', 'lcs', '', 'x', 'B2'],
      ['L2D', 'lcsd', '', 'x', 'B2'],
      ['L3', 'lcs', '', 'x', 'B3'],
      ['L3b', 'lcs', '', 'x', 'B3'],
      ['L3D', 'lcsd', '', 'x', 'B3'],
    ]);
    const l = findLinks(t);
    expect(l.pairRow[1]).toBe(0);
    expect(l.pairRow[3]).toBe(2);
    expect(l.pairRow[6]).toBe(-1); // two lcs rows in B3: ambiguous, no pair
  });

  it('prefers a parent in the same batch when ids repeat across batches', () => {
    const t = table([
      ['S1', 'sample', '', 'x', 'B1'],
      ['S1', 'sample', '', 'x', 'B2'],
      ['S1-MS', 'ms', 'S1', 'x', 'B2'],
    ]);
    expect(findLinks(t).parentRow[2]).toBe(1);
  });
});
