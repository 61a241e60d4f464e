/**
 * The QC sheet: every control row with the limits that judged it beside its
 * values. Values are live references to the Results sheet (so they follow it),
 * with the engine's values cached; then the run-rule outcome where it applied.
 */
import type { Flag, FlagCode } from '../../issues.js';
import type { RecalcResult } from '../../pipeline.js';
import { SheetBuilder } from './builder.js';
import { cell, type CellValue, type Mark, type PlannedCell, type PlannedRow, type SheetPlan } from './cells.js';
import { RESULTS_SHEET, type ResultsLayout } from './results-sheet.js';
import { significantFormat } from './style.js';

export const QC_SHEET = 'QC';

const MARKS: Partial<Record<FlagCode, { column: 'recovery' | 'rpd' | 'result'; mark: Mark }>> = {
  REC_LOW: { column: 'recovery', mark: 'fail' },
  REC_HIGH: { column: 'recovery', mark: 'fail' },
  OUTLIER: { column: 'recovery', mark: 'inform' },
  RPD_HIGH: { column: 'rpd', mark: 'fail' },
  BLANK_HIT: { column: 'result', mark: 'fail' },
};

export function planQcSheet(
  result: RecalcResult,
  options: { layout: ResultsLayout; live: boolean; /** result.flags by row (shared with the Results sheet). */ flagsByRow: ReadonlyMap<number, readonly Flag[]> },
): SheetPlan {
  const { layout } = options;
  const { table, method } = result;
  const conc = method.units.concentration;
  const texts = table.texts;
  const { flagsByRow } = options;

  /** A live reference to a Results cell (empty stays empty) in the given display format, or the value. */
  const ref = (columnName: string, kind: 'as-used' | 'computed', format: string | ((v: number) => string)) => {
    const col = kind === 'as-used' ? layout.asUsed.get(columnName) : layout.computed.get(columnName);
    const values = kind === 'as-used' ? table.numbers.get(columnName) : result.computed.get(columnName);
    const sheetRef = col ? `${RESULTS_SHEET}!${col.letter}` : '';
    // Literals, not cell(): the values are numbers or "", which need no sheetText.
    return (r: number): PlannedCell => {
      const v = values?.[r];
      const value = v !== undefined && Number.isFinite(v) ? v : null;
      const numFmt = typeof format === 'string' ? format : format(value ?? NaN);
      if (!col || !options.live) return { value, numFmt };
      const a = `${sheetRef}${r + 2}`;
      return { value: value ?? '', formula: `IF(${a}="","",${a})`, numFmt };
    };
  };
  const sig = method.reporting.significantFigures;
  const spikeCell = ref('spike_conc', 'as-used', '0.0###');
  const resultCell = ref('pre_extraction_conc', 'computed', (v) => significantFormat(v, sig));
  const recoveryCell = ref('spike_recovery_pct', 'computed', '0.0');
  const rpdCell = ref('rpd_pct', 'computed', '0.0');
  const sampleIds = texts.get('sample_id')!;
  const analytes = texts.get('analyte')!;
  const batches = texts.get('batch_id')!;
  const qcLevels = texts.get('qc_level')!;

  const header = [
    'worklist row',
    'Results row',
    'sample_id',
    'analyte',
    'batch',
    'sample type',
    'qc level',
    `spike [${conc}]`,
    `result [${conc}]`,
    'recovery %',
    'recovery low %',
    'recovery high %',
    'RPD %',
    'RPD max %',
    'limits from',
    'flags',
    'qc_status',
  ];
  const controls: number[] = [];
  for (let r = 0; r < result.rowsOut; r++) if (result.qc.status[r] !== '') controls.push(r);

  /** One control row, built when the writer (or verify) asks for it. */
  const controlRow = (r: number): PlannedRow => {
    const status = result.qc.status[r]!;
    const limits = result.qc.limits[r];
    const cells: Record<'spike' | 'result' | 'recovery' | 'rpd', PlannedCell> = {
      spike: spikeCell(r),
      result: resultCell(r),
      recovery: recoveryCell(r),
      rpd: rpdCell(r),
    };
    for (const f of flagsByRow.get(r) ?? []) {
      const m = MARKS[f.code];
      if (!m) continue;
      const c = cells[m.column];
      cells[m.column] = { ...c, mark: c.mark === 'fail' ? 'fail' : m.mark, note: c.note ? `${c.note}\n${f.code}: ${f.message}` : `${f.code}: ${f.message}` };
    }
    const sampleId = sampleIds[r]!;
    const values: (PlannedCell | CellValue)[] = [
      result.raw.rowNumbers[r]!,
      r + 2,
      sampleId,
      analytes[r]! || null,
      batches[r]! || null,
      table.sampleType[r]! || null,
      qcLevels[r]! || null,
      cells.spike,
      cells.result,
      cells.recovery,
      limits?.recovery?.[0] ?? null,
      limits?.recovery?.[1] ?? null,
      cells.rpd,
      limits?.rpdMax ?? null,
      limits?.origin ?? null,
      result.rowFlags[r]! || null,
      cell(status, status === 'fail' ? { mark: 'fail', note: 'This control row fails its QC: see its flags.' } : {}),
    ];
    return {
      cells: values.map((v) => (v !== null && typeof v === 'object' ? v : cell(v))),
      labels: header,
      context: { worklistRow: result.raw.rowNumbers[r]!, sampleId },
    };
  };

  // After the controls: a blank row and the run-rule table (small, built in full).
  const tail = new SheetBuilder();
  tail.blank();
  if (result.qc.runRule.length > 0) {
    tail.title('Run rule (at least the method fractions of all qc rows, and of the qc rows at each level, pass)', 'section');
    tail.table(
      ['batch', 'analyte', 'qc rows passing', 'qc rows', 'accepted', 'by level', 'reason'],
      result.qc.runRule.map((o) => [
        o.batch || '(one batch)',
        o.analyte,
        o.passed,
        o.total,
        cell(o.accepted ? 'yes' : 'no', { mark: o.accepted ? undefined : 'fail' }),
        o.levels.map((l) => `${l.level}: ${l.passed} of ${l.total}`).join('; '),
        o.reason ?? null,
      ]),
    );
  }
  const title: PlannedRow = { cells: [cell('QC: control rows and the limits that judged them', { style: 'title' })] };
  const headerRow: PlannedRow = { cells: header.map((h) => cell(h, { style: 'header' })), labels: header };
  const first = 2; // 0-based index of the first control row
  const rowCount = first + controls.length + tail.rows.length;
  const row = (i: number): PlannedRow => {
    if (i === 0) return title;
    if (i === 1) return headerRow;
    if (i < first + controls.length) return controlRow(controls[i - first]!);
    return tail.rows[i - first - controls.length]!;
  };

  return {
    name: QC_SHEET,
    widths: [12, 11, 22, 20, 14, 12, 10, 12, 12, 11, 11, 11, 10, 10, 40, 24, 10],
    frozen: { rows: 2 },
    autoFilter: { row: 2, columns: header.length },
    rowCount,
    row,
  };
}
