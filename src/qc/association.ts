import { pushTo } from '../group.js';
import type { FlagCode } from '../issues.js';
import { batchAnalyteKey, rowsByBatchAnalyte, type Finding, type QcContext } from './context.js';

/** What an association rule may ask about the rows already judged. */
export interface JudgedRows {
  /** The control failed on its own QC flags (not merely an input error). */
  failed(row: number): boolean;
  hasFlag(row: number, code: FlagCode): boolean;
  /** The batch's `sample` rows of this row's analyte. */
  batchSamples(row: number): readonly number[];
}

/**
 * A failed control qualifies the samples it stands for (DESIGN.md §5), as data:
 * which rows are sources, which rows they qualify, and why.
 */
export interface AssociationRule {
  code: FlagCode;
  description: string;
  /** What happened to the sources, in words, e.g. "failed". */
  happened: string;
  isSource(ctx: QcContext, row: number, judged: JudgedRows): boolean;
  targets(ctx: QcContext, row: number, judged: JudgedRows): readonly number[];
}

export const ASSOCIATION_RULES: readonly AssociationRule[] = [
  {
    code: 'LCS_ASSOC',
    description: 'a failed lcs or lcsd qualifies every sample row of its analyte in its batch',
    happened: 'failed',
    isSource: (ctx, r, j) => (ctx.type[r] === 'lcs' || ctx.type[r] === 'lcsd') && j.failed(r),
    targets: (_ctx, r, j) => j.batchSamples(r),
  },
  {
    code: 'MATRIX_ASSOC',
    description: 'a failed ms or msd qualifies its parent sample',
    happened: 'failed',
    isSource: (ctx, r, j) => (ctx.type[r] === 'ms' || ctx.type[r] === 'msd') && j.failed(r),
    targets: (ctx, r) => {
      const p = ctx.input.links.parentRow[r]!;
      return p >= 0 && ctx.type[p] === 'sample' ? [p] : [];
    },
  },
  {
    code: 'BLANK_ASSOC',
    description: 'a blank at or above the reporting limit qualifies every sample row of its analyte in its batch',
    happened: 'at or above the reporting limit',
    isSource: (_ctx, r, j) => j.hasFlag(r, 'BLANK_HIT'),
    targets: (_ctx, r, j) => j.batchSamples(r),
  },
];

/**
 * Apply every association rule: one flag per (qualified row, code), naming all
 * the controls that caused it.
 */
export function associate(ctx: QcContext, judged: Omit<JudgedRows, 'batchSamples'>): Array<{ row: number; code: FlagCode; finding: Finding }> {
  const samplesByKey = rowsByBatchAnalyte(ctx, 'sample');
  const j: JudgedRows = { ...judged, batchSamples: (r) => samplesByKey.get(batchAnalyteKey(ctx, r)) ?? [] };
  const out: Array<{ row: number; code: FlagCode; finding: Finding }> = [];
  for (const rule of ASSOCIATION_RULES) {
    const sourcesOf = new Map<number, number[]>();
    for (let r = 0; r < ctx.rowCount; r++) {
      if (ctx.input.rowError[r] || !rule.isSource(ctx, r, j)) continue;
      for (const t of rule.targets(ctx, r, j)) {
        // A sample with an input error has no result to qualify; its INPUT_ERROR says enough.
        if (ctx.input.rowError[t]) continue;
        pushTo(sourcesOf, t, r);
      }
    }
    for (const [row, sources] of sourcesOf) {
      const named = sources.map((s) => `${ctx.type[s]} "${ctx.sampleId[s]}"`).join(', ');
      out.push({ row, code: rule.code, finding: { text: `qualified by ${named}: ${rule.happened}`, value: sources.map((s) => ctx.sampleId[s]).join(', ') } });
    }
  }
  return out;
}
