/**
 * The reviewer's workbook (DESIGN.md §6): Summary, Results, QC, Flags, Trends,
 * Method and Provenance, in that order. The Results sheet carries the worklist verbatim, the
 * values each formula reads "as used", and the computed columns as live formulas
 * with the engine's values cached; flagged cells are filled and carry a note.
 *
 * The sheets are planned as data first (write/workbook/workbook-plan.ts) and then streamed
 * to disk (write/workbook/write.ts); `phasebook verify` plans the same workbook
 * from a recomputation and compares it with what is stored.
 */
import type { RecalcResult } from '../../pipeline.js';
import { planWorkbook } from './workbook-plan.js';
import { writePlannedWorkbook } from './write.js';
import type { RunInfo, WorkbookOptions } from './options.js';

export type { RunInfo, WorkbookOptions } from './options.js';
export { DEFAULT_FORMULA_ROW_LIMIT, DEFAULT_MAX_NOTES } from './options.js';

/** Write the workbook to `path` (a new file; outputs.ts renames it into place). */
export async function writeWorkbook(path: string, result: RecalcResult, options: WorkbookOptions): Promise<void> {
  const run: RunInfo = { ...options.run, node: options.run.node ?? process.version };
  const plan = planWorkbook(result, { run, formulaRowLimit: options.formulaRowLimit, maxNotes: options.maxNotes, history: options.history });
  await writePlannedWorkbook(path, plan, { run });
}
