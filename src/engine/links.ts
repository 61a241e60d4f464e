import { groupBy, pushTo } from '../group.js';
import type { SampleType } from '../domain/fields.js';

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

  // Look-ups by (analyte, id) through two levels of maps: no key strings are
  // built per row, and a worklist's repeated ids share their cached hash.
  const samples = new RowIndex(t.batchId);
  const lcsById = new RowIndex(t.batchId);
  const msByParent = new RowIndex(t.batchId);
  const lcsByBatch = new RowIndex(t.batchId);
  for (let r = 0; r < n; r++) {
    const type = t.sampleType[r];
    if (type === 'sample') samples.add(t.analyte[r]!, t.sampleId[r]!, r);
    else if (type === 'lcs') {
      lcsById.add(t.analyte[r]!, t.sampleId[r]!, r);
      lcsByBatch.add(t.analyte[r]!, t.batchId[r]!, r);
    } else if (type === 'ms') msByParent.add(t.analyte[r]!, t.parentId[r]!, r);
  }

  for (let r = 0; r < n; r++) {
    const type = t.sampleType[r];
    const pid = t.parentId[r]!;
    if (type === 'ms' || type === 'msd' || type === 'dup') {
      const p = pid === '' ? -1 : samples.pick(t.analyte[r]!, pid, r);
      parentRow[r] = p;
      if (p < 0) noParent[r] = 1;
      if (type === 'dup') pairRow[r] = p;
      // An msd without its native sample gets no RPD either (NO_PARENT: recovery and RPD stay empty).
      if (type === 'msd' && p >= 0) pairRow[r] = msByParent.pick(t.analyte[r]!, pid, r);
    } else if (type === 'lcsd') {
      let l = -1;
      if (pid !== '') l = lcsById.pick(t.analyte[r]!, pid, r);
      else {
        const inBatch = lcsByBatch.rows(t.analyte[r]!, t.batchId[r]!);
        if (inBatch && inBatch.length === 1) l = inBatch[0]!;
      }
      parentRow[r] = l;
      pairRow[r] = l;
    }
  }
  return { parentRow, pairRow, noParent };
}

/** Rows by (analyte, id), in worklist order. */
class RowIndex {
  private readonly byAnalyte = new Map<string, Map<string, number[]>>();
  /** For ids listed many times: their rows by batch, built on first use. */
  private readonly byBatch = new Map<number[], Map<string, number[]>>();

  constructor(private readonly batchId: readonly string[]) {}

  add(analyte: string, id: string, row: number): void {
    let ids = this.byAnalyte.get(analyte);
    if (!ids) this.byAnalyte.set(analyte, (ids = new Map()));
    pushTo(ids, id, row);
  }

  rows(analyte: string, id: string): number[] | undefined {
    return this.byAnalyte.get(analyte)?.get(id);
  }

  /**
   * The row for `row` to link to: the first listed in the same batch (other than
   * `row` itself), else the first listed; −1 when none.
   */
  pick(analyte: string, id: string, row: number): number {
    const rows = this.rows(analyte, id);
    if (!rows || rows.length === 0) return -1;
    const batch = this.batchId[row];
    let sameBatch: number[] = rows;
    if (rows.length > FEW) {
      let m = this.byBatch.get(rows);
      if (!m) {
        m = groupBy(rows, (x) => this.batchId[x]!);
        this.byBatch.set(rows, m);
      }
      sameBatch = m.get(batch!) ?? [];
    }
    for (const x of sameBatch) if (x !== row && this.batchId[x] === batch) return x;
    return rows[0] !== row ? rows[0]! : rows.length > 1 ? rows[1]! : -1;
  }
}

/** Lists longer than this are split by batch before picking (ids reused in every batch). */
const FEW = 8;
