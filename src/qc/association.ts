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
  /** The other rows of this row's sample in its batch (the same sample id, the other analytes). */
  sameSample(row: number): readonly number[];
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
    code: 'SURROGATE_ASSOC',
    // US EPA SW-846 Method 8000 practice: a surrogate outside its limits qualifies the results of its sample.
    description: 'a surrogate outside its limits qualifies every other analyte of its sample in its batch',
    happened: 'outside its limits',
    isSource: (ctx, r, j) => ctx.isSurrogate(r) && (j.hasFlag(r, 'REC_LOW') || j.hasFlag(r, 'REC_HIGH')),
    targets: (ctx, r, j) => j.sameSample(r).filter((t) => !ctx.isSurrogate(t)),
  },
  {
    code: 'BLANK_ASSOC',
    description: 'a blank at or above the reporting limit qualifies every sample row of its analyte in its batch',
    happened: 'at or above the reporting limit',
    isSource: (_ctx, r, j) => j.hasFlag(r, 'BLANK_HIT'),
    targets: (_ctx, r, j) => j.batchSamples(r),
  },
];

/** Controls named in one qualifying flag; the rest are counted ("and 3,990 more"). */
export const NAMED_SOURCES = 10;

/**
 * Apply every association rule: one flag per (qualified row, code), naming the
 * controls that caused it (the first NAMED_SOURCES of them, and how many more).
 *
 * Linear in the rows: the sources are grouped by the list of rows they qualify (the
 * rules hand back one shared list per batch and analyte), each group's words are made
 * once and shared by every row of its list, and a row qualified through several lists
 * (an ms and an msd of one parent) has them merged. Naming every source for every
 * sample was quadratic: 4,000 failing blanks in a batch of 44,000 rows ran out of memory.
 */
export function associate(ctx: QcContext, judged: Omit<JudgedRows, 'batchSamples' | 'sameSample'>): Array<{ row: number; code: FlagCode; finding: Finding }> {
  const samplesByKey = rowsByBatchAnalyte(ctx, 'sample');
  // Rows by batch and sample id (a surrogate's targets; one shared list per sample), built only when a surrogate asks.
  let bySample: Map<string, number[]> | undefined;
  const sampleRows = (r: number) => {
    if (!bySample) {
      bySample = new Map();
      for (let k = 0; k < ctx.rowCount; k++) pushTo(bySample, `${ctx.batch[k]}\u0000${ctx.sampleId[k]}`, k);
    }
    return bySample.get(`${ctx.batch[r]}\u0000${ctx.sampleId[r]}`) ?? [];
  };
  const j: JudgedRows = {
    ...judged,
    batchSamples: (r) => samplesByKey.get(batchAnalyteKey(ctx, r)) ?? [],
    sameSample: sampleRows,
  };
  const out: Array<{ row: number; code: FlagCode; finding: Finding }> = [];
  for (const rule of ASSOCIATION_RULES) {
    // Sources per list of targets (by identity), in row order.
    const sourcesOfList = new Map<readonly number[], number[]>();
    for (let r = 0; r < ctx.rowCount; r++) {
      if (ctx.input.rowError[r] || !rule.isSource(ctx, r, j)) continue;
      const targets = rule.targets(ctx, r, j);
      if (targets.length > 0) pushTo(sourcesOfList, targets, r);
    }
    // Each row's source groups: one per list it is in (a list is walked once, not once per source).
    const groupsOf = new Map<number, number[][]>();
    for (const [targets, sources] of sourcesOfList) {
      for (const t of targets) {
        // A sample with an input error has no result to qualify; its INPUT_ERROR says enough.
        if (!ctx.input.rowError[t]) pushTo(groupsOf, t, sources);
      }
    }
    const shared = new Map<number[], Finding>();
    const findingOf = (sources: readonly number[]): Finding => {
      const named = sources.slice(0, NAMED_SOURCES);
      const more = sources.length - named.length;
      const tail = more > 0 ? `, and ${more.toLocaleString('en-US')} more` : '';
      return {
        text: `qualified by ${named.map((s) => `${ctx.type[s]} "${ctx.sampleId[s]}"`).join(', ')}${tail}: ${rule.happened}`,
        value: named.map((s) => ctx.sampleId[s]).join(', ') + tail,
      };
    };
    const rows = [...groupsOf.keys()].sort((a, b) => a - b);
    for (const row of rows) {
      const groups = groupsOf.get(row)!;
      let finding: Finding;
      if (groups.length === 1) {
        const only = groups[0]!;
        finding = shared.get(only) ?? findingOf(only);
        shared.set(only, finding);
      } else {
        finding = findingOf([...new Set(groups.flat())].sort((a, b) => a - b));
      }
      out.push({ row, code: rule.code, finding });
    }
  }
  return out;
}
