import type { SampleType } from '../columns/fields.js';

/**
 * Cross-row links, found once from the text columns before any formula runs:
 * - parent: the native sample an ms, msd or dup names by parent_id (same analyte,
 *   a `sample` row), and the lcs an lcsd names;
 * - pair: the row a control's RPD is taken against (DESIGN.md §4): msd → the ms
 *   of the same parent, lcsd → its lcs (named, or the only lcs of that analyte
 *   in the batch), dup → its parent.
 * Where several rows match, one in the same batch is preferred, then the first.
 */
export interface Links {
  parentRow: Int32Array;
  pairRow: Int32Array;
  /** 1 where an ms, msd or dup names no sample row of its analyte (NO_PARENT). */
  noParent: Uint8Array;
}

export interface LinkInput {
  rowCount: number;
  sampleType: readonly (SampleType | '')[];
  sampleId: readonly string[];
  parentId: readonly string[];
  analyte: readonly string[];
  batchId: readonly string[];
}

export function findLinks(t: LinkInput): Links {
  const n = t.rowCount;
  const parentRow = new Int32Array(n).fill(-1);
  const pairRow = new Int32Array(n).fill(-1);
  const noParent = new Uint8Array(n);

  const index = (type: SampleType) => {
    const m = new Map<string, number[]>();
    for (let r = 0; r < n; r++) {
      if (t.sampleType[r] !== type) continue;
      const k = key(t.analyte[r]!, t.sampleId[r]!);
      const list = m.get(k);
      if (list) list.push(r);
      else m.set(k, [r]);
    }
    return m;
  };
  const samples = index('sample');
  const lcsById = index('lcs');
  const msByParent = new Map<string, number[]>();
  const lcsByBatch = new Map<string, number[]>();
  for (let r = 0; r < n; r++) {
    if (t.sampleType[r] === 'ms') push(msByParent, key(t.analyte[r]!, t.parentId[r]!), r);
    if (t.sampleType[r] === 'lcs') push(lcsByBatch, key(t.analyte[r]!, t.batchId[r]!), r);
  }
  const pick = (rows: number[] | undefined, r: number): number => {
    if (!rows || rows.length === 0) return -1;
    return rows.find((x) => t.batchId[x] === t.batchId[r] && x !== r) ?? rows.find((x) => x !== r) ?? -1;
  };

  for (let r = 0; r < n; r++) {
    const type = t.sampleType[r];
    const pid = t.parentId[r]!;
    if (type === 'ms' || type === 'msd' || type === 'dup') {
      const p = pid === '' ? -1 : pick(samples.get(key(t.analyte[r]!, pid)), r);
      parentRow[r] = p;
      if (p < 0) noParent[r] = 1;
      if (type === 'dup') pairRow[r] = p;
      if (type === 'msd' && pid !== '') pairRow[r] = pick(msByParent.get(key(t.analyte[r]!, pid)), r);
    } else if (type === 'lcsd') {
      let l = -1;
      if (pid !== '') l = pick(lcsById.get(key(t.analyte[r]!, pid)), r);
      else {
        const inBatch = lcsByBatch.get(key(t.analyte[r]!, t.batchId[r]!));
        if (inBatch && inBatch.length === 1) l = inBatch[0]!;
      }
      parentRow[r] = l;
      pairRow[r] = l;
    }
  }
  return { parentRow, pairRow, noParent };
}

function key(a: string, b: string): string {
  return `${a}\u0000${b}`;
}

function push(m: Map<string, number[]>, k: string, v: number): void {
  const list = m.get(k);
  if (list) list.push(v);
  else m.set(k, [v]);
}
