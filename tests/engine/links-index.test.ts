import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { SampleType } from '../../src/domain/fields.js';
import { findLinks, type LinkInput } from '../../src/engine/links.js';

/**
 * findLinks looks rows up through two levels of maps and splits long lists by
 * batch. This checks it against the rule written out plainly (DESIGN.md §4:
 * the parent named by parent_id among rows of the same analyte, one in the same
 * batch preferred, then the first), on random worklists with ids reused across
 * batches, so the long-list path is exercised too.
 */
function reference(t: LinkInput) {
  const n = t.rowCount;
  const parentRow = new Int32Array(n).fill(-1);
  const pairRow = new Int32Array(n).fill(-1);
  const noParent = new Uint8Array(n);
  const rowsWhere = (test: (x: number) => boolean) => Array.from({ length: n }, (_, x) => x).filter(test);
  const pick = (rows: number[], r: number) =>
    rows.find((x) => t.batchId[x] === t.batchId[r] && x !== r) ?? rows.find((x) => x !== r) ?? -1;
  for (let r = 0; r < n; r++) {
    const type = t.sampleType[r];
    const pid = t.parentId[r]!;
    const a = t.analyte[r];
    if (type === 'ms' || type === 'msd' || type === 'dup') {
      const p = pid === '' ? -1 : pick(rowsWhere((x) => t.sampleType[x] === 'sample' && t.analyte[x] === a && t.sampleId[x] === pid), r);
      parentRow[r] = p;
      if (p < 0) noParent[r] = 1;
      if (type === 'dup') pairRow[r] = p;
      if (type === 'msd' && p >= 0) pairRow[r] = pick(rowsWhere((x) => t.sampleType[x] === 'ms' && t.analyte[x] === a && t.parentId[x] === pid), r);
    } else if (type === 'lcsd') {
      let l = -1;
      if (pid !== '') l = pick(rowsWhere((x) => t.sampleType[x] === 'lcs' && t.analyte[x] === a && t.sampleId[x] === pid), r);
      else {
        const inBatch = rowsWhere((x) => t.sampleType[x] === 'lcs' && t.analyte[x] === a && t.batchId[x] === t.batchId[r]);
        if (inBatch.length === 1) l = inBatch[0]!;
      }
      parentRow[r] = l;
      pairRow[r] = l;
    }
  }
  return { parentRow: [...parentRow], pairRow: [...pairRow], noParent: [...noParent] };
}

const TYPES: SampleType[] = ['sample', 'sample', 'sample', 'blank', 'lcs', 'lcsd', 'ms', 'msd', 'dup', 'qc'];
const row = fc.record({
  type: fc.constantFrom(...TYPES),
  id: fc.constantFrom('S1', 'S2', 'S3', 'L1', ''),
  parent: fc.constantFrom('S1', 'S2', 'S3', 'L1', 'GONE', ''),
  analyte: fc.constantFrom('x', 'y'),
  batch: fc.constantFrom('B1', 'B2', 'B3', 'B4'),
});

function toInput(rows: Array<{ type: SampleType; id: string; parent: string; analyte: string; batch: string }>): LinkInput {
  return {
    rowCount: rows.length,
    sampleType: rows.map((r) => r.type),
    sampleId: rows.map((r) => r.id),
    parentId: rows.map((r) => r.parent),
    analyte: rows.map((r) => r.analyte),
    batchId: rows.map((r) => r.batch),
  };
}

describe('cross-row links agree with the plain rule', () => {
  it('on random worklists, short and long (ids reused in many batches)', () => {
    fc.assert(
      fc.property(fc.array(row, { minLength: 0, maxLength: 120 }), (rows) => {
        const t = toInput(rows);
        const got = findLinks(t);
        expect({ parentRow: [...got.parentRow], pairRow: [...got.pairRow], noParent: [...got.noParent] }).toEqual(reference(t));
      }),
      { numRuns: 300, seed: 6 },
    );
  });

  it('an id listed in every batch links within the batch (the long-list path)', () => {
    const rows = [];
    for (let b = 1; b <= 20; b++) {
      rows.push({ type: 'sample' as const, id: 'S1', parent: '', analyte: 'x', batch: `B${b}` });
      rows.push({ type: 'ms' as const, id: 'S1-MS', parent: 'S1', analyte: 'x', batch: `B${b}` });
      rows.push({ type: 'msd' as const, id: 'S1-MSD', parent: 'S1', analyte: 'x', batch: `B${b}` });
    }
    const l = findLinks(toInput(rows));
    for (let b = 0; b < 20; b++) {
      expect(l.parentRow[3 * b + 1]).toBe(3 * b); // ms → the sample of its own batch
      expect(l.pairRow[3 * b + 2]).toBe(3 * b + 1); // msd → the ms of its own batch
    }
  });
});
