/**
 * The Summary sheet, first because a reviewer starts with the verdict: the batch
 * verdict and its reasons, one line per batch and per (batch, analyte) with counts,
 * recovery statistics, RPD, blanks and mean extraction efficiency, the legend of
 * the marks used on the other sheets, and what each flag code means.
 */
import { SAMPLE_TYPES } from '../../domain/fields.js';
import { FAILING_CODES, FLAG_CODES, type FlagCode } from '../../issues.js';
import type { RecalcResult } from '../../pipeline.js';
import { SheetBuilder } from './builder.js';
import { cell, type CellValue, type Mark, type SheetPlan } from './cells.js';
import { MARK_MEANINGS, significantFormat } from './style.js';
import type { RunInfo } from './options.js';

export const SUMMARY_SHEET = 'Summary';

/** What each flag code means, in plain words (DESIGN.md §5). */
export const FLAG_MEANINGS: Record<FlagCode, string> = {
  REC_LOW: 'spike recovery below the lower limit for the row type (and qc level)',
  REC_HIGH: 'spike recovery above the upper limit for the row type (and qc level)',
  RPD_HIGH: 'RPD of a pair (msd–ms, lcsd–lcs, dup–parent) above its maximum',
  BLANK_HIT: 'a blank at or above the reporting limit',
  BELOW_RL: 'a sample result below the reporting limit',
  OVER_RANGE: "the extract concentration is above the analyte's calibration range",
  ISTD_RESPONSE: "the internal-standard response is outside the method's window around the mean response of the batch's calibrators and qc rows (common practice: 50–150 %); it fails a control and qualifies a sample",
  OUTLIER: "a statistical outlier among the recoveries of its group (Grubbs' or Dixon's test)",
  NOT_DETECTED: 'the instrument reported the result as not detected (ND, n.d., BLQ, < 0.5, …): no concentration is computed; a blank so is clean, a spiked control has recovered nothing, a sample is below its reporting limit',
  NO_PARENT: 'an ms, msd or dup whose parent_id names no sample row of its analyte',
  INPUT_ERROR: 'a cell could not be used (the reason names the row and column); the row is not computed',
  LCS_ASSOC: 'a sample whose batch lcs or lcsd failed',
  MATRIX_ASSOC: 'a sample whose ms or msd failed',
  SURROGATE_ASSOC: "an analyte of a sample whose surrogate recovery is outside its limits (US EPA SW-846 Method 8000 practice): it qualifies the sample's results, it does not fail the batch",
  BLANK_ASSOC: 'a sample whose batch blank is at or above the reporting limit',
};

export const MARK_LEGEND: readonly Mark[] = ['fail', 'inform', 'note'];

const pct = (x: number): CellValue => (Number.isFinite(x) ? x : null);

export function planSummarySheet(
  result: RecalcResult,
  options: { run: RunInfo; formulas: boolean; formulaRowLimit: number; maxNotes: number },
): SheetPlan {
  const b = new SheetBuilder();
  const v = result.verdict;
  const fail = v.verdict === 'fail';
  b.title(`Review workbook: ${result.worklist.name}`);
  const h = v.headline;
  const accepted = h.kind === 'accepted-with-failures';
  b.keyValue('Batch verdict', cell(h.label, { mark: fail ? 'fail' : accepted ? 'inform' : undefined, style: 'label' }));
  // Not wrapped: one line that runs on into the empty cells beside it, so it never overlaps the row below.
  b.keyValue('In a sentence', cell(h.sentence, { mark: fail ? 'fail' : accepted ? 'inform' : undefined }));
  v.reasons.forEach((reason, i) => b.add([i === 0 ? cell('Why', { style: 'label' }) : undefined, cell(reason, { style: 'wrap' })], { labels: ['Why', 'Why'] }));
  b.keyValue(
    'Failed controls',
    v.failedControls.length === 0 ? 'none' : `${v.failedControls.length}, listed under "Failed controls" below with their values and limits`,
  );
  b.keyValue('Worklist', result.worklist.name);
  b.keyValue('Method', `${result.method.name}: ${result.method.title}${result.method.version ? ` (version ${result.method.version})` : ''}`);
  b.keyValue('Run time (UTC)', options.run.timestamp);
  b.keyValue('Rows', `${result.rowsIn} read, ${result.rowsOut} in every output`);
  b.keyValue(
    'Results sheet',
    options.formulas
      ? 'live formulas with the engine values cached: click a computed cell to see how it was computed'
      : `values only: ${result.rowsOut} rows is above the formula row limit of ${options.formulaRowLimit}`,
  );
  b.blank();

  b.title('Batches', 'section');
  b.table(
    ['batch', 'verdict', 'reasons'],
    v.batches.map((bv) => [bv.batch || '(one batch)', cell(bv.verdict, { mark: bv.verdict === 'fail' ? 'fail' : undefined }), cell(bv.reasons.join('\n') || null, { style: 'wrap' })]),
  );
  b.blank();

  if (v.failedControls.length > 0) {
    b.title('Failed controls', 'section');
    b.table(
      ['sample id', 'row type', 'qc level', 'analyte', 'batch', 'row', 'judged', 'what failed'],
      v.failedControls.map((c) => [
        c.sampleId,
        c.type || '(unknown)',
        c.level || null,
        c.analyte || '(no analyte)',
        c.batch || '(one batch)',
        result.raw.rowNumbers[c.row] ?? c.row + 2,
        cell(c.tolerated ? 'failed; the run rule accepts the run' : 'failed', { mark: c.tolerated ? 'inform' : 'fail' }),
        cell(c.findings.map((f) => `${f.code}: ${f.message}`).join('\n') || 'failed', { style: 'wrap' }),
      ]),
    );
    b.blank();
  }

  b.title('By batch and analyte', 'section');
  b.table(
    [
      'batch',
      'analyte',
      'verdict',
      ...SAMPLE_TYPES.map((t) => `${t} rows`),
      'input errors',
      'failed controls',
      'qualified by a surrogate',
      'outside limits',
      'max RPD %',
      'blanks',
      'mean E %',
      'run rule',
      'reasons',
      'notes',
    ],
    result.groups.map((g) => [
      g.batch || '(one batch)',
      g.analyte || '(no analyte)',
      cell(g.verdict, { mark: g.verdict === 'fail' ? 'fail' : undefined }),
      ...SAMPLE_TYPES.map((t) => g.counts[t] ?? 0),
      cell(g.inputErrors, { mark: g.inputErrors > 0 ? 'fail' : undefined }),
      cell(g.failedControls, { mark: g.failedControls > 0 ? 'fail' : undefined }),
      cell(g.surrogateQualified, { mark: g.surrogateQualified > 0 ? 'inform' : undefined }),
      g.outsideLimits,
      cell(pct(g.maxRpd), { numFmt: '0.0' }),
      cell(g.blankStatus, { mark: g.blankStatus === 'hit' ? 'fail' : undefined }),
      cell(pct(g.meanEfficiencyPct), { numFmt: '0.0' }),
      g.runRule
        ? cell(g.runRule.accepted ? `accepted (${g.runRule.passed} of ${g.runRule.total} pass)` : `rejected: ${g.runRule.reason ?? ''}`, {
            mark: g.runRule.accepted ? undefined : 'fail',
          })
        : null,
      cell(g.reasons.join('\n') || null, { style: 'wrap' }),
      cell(g.notes.join('\n') || null, { style: 'wrap' }),
    ]),
  );
  b.blank();

  b.title('Recoveries by row type', 'section');
  const recRows: CellValue[][] = [];
  for (const g of result.groups) {
    for (const r of g.recoveries) {
      recRows.push([g.batch || '(one batch)', g.analyte || '(no analyte)', r.type, r.level || null, r.n, pct(r.mean), pct(r.sd), pct(r.rsdPct), pct(r.min), pct(r.max), r.outside]);
    }
  }
  b.table(
    ['batch', 'analyte', 'row type', 'qc level', 'n', 'mean %', 'SD %', 'RSD %', 'min %', 'max %', 'outside limits'],
    recRows.map((r) => r.map((x, i) => (i >= 5 && i <= 9 ? cell(x, { numFmt: '0.0' }) : x))),
  );
  b.blank();

  const precision = result.groups.flatMap((g) => g.precision.map((p) => ({ g, p })));
  if (precision.length > 0) {
    const u = result.method.units.concentration;
    const sig = result.method.reporting.significantFigures;
    const bySignificance = (x: number) => cell(pct(x), { numFmt: significantFormat(x, sig) });
    b.title('Precision of the qc levels', 'section');
    b.table(
      ['batch', 'analyte', 'qc level', 'n', `mean [${u}]`, `SD [${u}]`, 'CV %'],
      precision.map(({ g, p }) => [g.batch || '(one batch)', g.analyte, p.level, p.n, bySignificance(p.meanConc), bySignificance(p.sdConc), cell(pct(p.cvPct), { numFmt: '0.0' })]),
    );
    b.blank();
  }

  b.title('Legend', 'section');
  const legendRows: (ReturnType<typeof cell> | string)[][] = MARK_LEGEND.map((m) => [cell(m === 'fail' ? 'fails' : m === 'inform' ? 'informs' : 'note', { mark: m }), MARK_MEANINGS[m]]);
  legendRows.push([
    cell('read first', { style: 'header-status' }),
    'Results: sample_id, analyte, reported_result, flags and qc_status lead the sheet (the worklist row and the row check are marked so too); the worklist columns and the as-used columns after them fold away with the outline buttons above the column letters',
  ]);
  legendRows.push([cell('worklist column', { style: 'header-input' }), 'Results: a column of the worklist, verbatim']);
  legendRows.push([cell('as used', { style: 'header-as-used' }), 'Results: the value a formula reads, in the method units and codes (a formula over the worklist cell)']);
  legendRows.push([cell('computed', { style: 'header-computed' }), "Results: a formula column of the method, a live formula with the engine's value cached"]);
  b.table(['mark', 'meaning'], legendRows);
  b.keyValue(
    'Notes',
    `On the Results and QC sheets every marked cell carries a note with the reason (up to ${options.maxNotes} notes per workbook; beyond that the fill alone). The Flags sheet lists every flag and note.`,
  );
  b.blank();

  b.title('Flag codes', 'section');
  b.table(
    ['code', 'effect', 'meaning'],
    FLAG_CODES.map((code) => {
      const failing = code === 'INPUT_ERROR' || FAILING_CODES.has(code);
      return [cell(code, { mark: failing ? 'fail' : 'inform' }), failing ? 'fails the row' : 'informs', FLAG_MEANINGS[code]];
    }),
  );

  return b.plan(SUMMARY_SHEET, { widths: [24, 44, 14, 10, 10, 10, 10, 10, 10, 10, 10, 10, 12, 12, 12, 12, 12, 10, 10, 24, 50, 40] });
}
