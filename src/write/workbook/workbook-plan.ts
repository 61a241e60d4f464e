/**
 * The whole workbook as a plan: the seven sheets in order (Summary, Results, QC,
 * Flags, Trends, Method, Provenance). The Provenance sheet needs the integrity digest,
 * which is taken over the Results rows as they are written (or, in verify, as
 * they are stored), so it is planned last from that digest.
 */
import { groupBy } from '../../group.js';
import type { RecalcResult } from '../../pipeline.js';
import type { CellValue, SheetPlan } from './cells.js';
import { sha256Text } from './digest.js';
import { planFlagsSheet } from './flags-sheet.js';
import { inHouseRows, lineEndOf, lineEnds, limitRows, methodLines, planMethodSheet } from './method-sheet.js';
import { DEFAULT_FORMULA_ROW_LIMIT, DEFAULT_MAX_NOTES, type RunInfo } from './options.js';
import { describeFormat, planProvenanceSheet } from './provenance-sheet.js';
import { planQcSheet } from './qc-sheet.js';
import { planResultsSheet, type ResultsSheet } from './results-sheet.js';
import { sheetText } from './cells.js';
import { planSummarySheet } from './summary-sheet.js';
import { planTrendsSheet, type TrendsSheet, type TrendsSheetInput } from './trends-sheet.js';
import { MIN_POINTS } from '../../history/trends.js';

export const SHEET_ORDER = ['Summary', 'Results', 'QC', 'Flags', 'Trends', 'Method', 'Provenance'] as const;

export interface PlanOptions {
  run: RunInfo;
  formulaRowLimit?: number;
  maxNotes?: number;
  /** Live formulas or values only; default: live when the worklist has no more rows than formulaRowLimit. */
  formulas?: boolean;
  /** How the worklist was read, in words (default from result.raw.format). */
  readAs?: string;
  /** The QC history's series, this run included (history/trends.ts trendsIncludingRun), for the Trends sheet. */
  history?: TrendsSheetInput;
  /** Points a series needs before it has limits (default MIN_POINTS). */
  minPoints?: number;
}

export interface WorkbookPlan {
  /** The worklist's name, in every sheet's printed footer. */
  title: string;
  formulas: boolean;
  formulaRowLimit: number;
  maxNotes: number;
  summary: SheetPlan;
  results: ResultsSheet;
  qc: SheetPlan;
  flags: SheetPlan;
  trends: TrendsSheet;
  method: SheetPlan;
  /** SHA-256 of the method text as the Method sheet holds it, and the limits tables (acceptance, in-house): the digest's tail. */
  methodTextSha: string;
  limits: CellValue[][];
  /** The Provenance sheet, given the integrity digest and the column checks taken while the Results rows were written or read. */
  provenance(digest: string, columnChecks?: string): SheetPlan;
}

export function planWorkbook(result: RecalcResult, options: PlanOptions): WorkbookPlan {
  const formulaRowLimit = options.formulaRowLimit ?? DEFAULT_FORMULA_ROW_LIMIT;
  const maxNotes = options.maxNotes ?? DEFAULT_MAX_NOTES;
  const formulas = options.formulas ?? result.rowsOut <= formulaRowLimit;
  const { refs } = planMethodSheet(result);
  const flagsByRow = groupBy(result.flags, (f) => f.row);
  const results = planResultsSheet(result, { refs, formulas, flagsByRow });
  const method = planMethodSheet(result, { formulaForms: results.formulaForms }).plan;
  const layout = results.layout;
  const sheetTextOfMethod = methodLines(result.method.text).map(sheetText).join(lineEndOf(lineEnds(result.method.text)));
  return {
    title: result.worklist.name,
    formulas,
    formulaRowLimit,
    maxNotes,
    summary: planSummarySheet(result, { run: options.run, formulas, formulaRowLimit, maxNotes }),
    results,
    qc: planQcSheet(result, { layout, live: true, flagsByRow }),
    flags: planFlagsSheet(result, { layout }),
    trends: planTrendsSheet(result, { history: options.history, minPoints: options.minPoints ?? MIN_POINTS }),
    method,
    methodTextSha: sha256Text(sheetTextOfMethod),
    limits: [
      ...limitRows(result.method),
      ...(result.method.qc.limitsSource === 'in_house' ? inHouseRows(result) : []),
    ],
    provenance: (digest, columnChecks) =>
      planProvenanceSheet(result, {
        run: options.run,
        readAs: options.readAs ?? describeFormat(result.raw.format, result.table.numberFormat),
        formulas,
        formulaRowLimit,
        maxNotes,
        digest,
        columnChecks,
      }),
  };
}
