/**
 * The Results sheet, planned row by row (the columns' places: results-layout.ts).
 *
 * Columns, left to right:
 * 1. what the reviewer reads first: `sample_id` and `analyte` as the run read them,
 *    `reported_result`, `flags` and `qc_status` (as in the CSV);
 * 2. the worklist's columns, verbatim and in order (text stays text; a CSV cell of a
 *    numeric field, or one that is plainly a number, is stored as a number), an
 *    outline group that folds away;
 * 3. `worklist row`: the row of the sample in the worklist file (messages name it);
 * 4. "as used" columns, one per canonical field the formulas read, in the method's
 *    units and canonical codes, each a formula over the verbatim input cell (unit
 *    factor, default from the Method sheet, lab code look-up) with the engine's value
 *    cached; another outline group;
 * 5. the computed columns (same headers as the results CSV), live formulas over the
 *    as-used and computed cells of the row and, for parent()/pair(), of the linked row,
 *    and the expanded uncertainty where the run has one;
 * 6. `row check`, a short hash of the row's input cells that `phasebook verify` recomputes.
 *
 * Rows with an input error hold plain values (computed cells empty), since the
 * spreadsheet cannot know the engine's row validation. A formula with no spreadsheet
 * form is written as its value with a note. Above a row limit (an option) the whole
 * sheet holds values only, and the Summary and Provenance sheets say so.
 */
import type { MathNode } from 'mathjs';
import { groupBy } from '../../group.js';
import { hash } from 'node:crypto';
import { FIELD_SPECS, isCanonicalField, type CanonicalField } from '../../domain/fields.js';
import { FAILING_CODES, type Flag } from '../../issues.js';
import type { RecalcResult } from '../../pipeline.js';
import type { RawCell } from '../../read/types.js';
import { UNCERTAINTY_COLUMNS } from '../output-columns.js';
import { RESULT_COLUMN } from '../../qc/uncertainty.js';
import { toSheetFormula } from '../sheet-formula.js';
import {
  MAX_CELL_TEXT,
  cell,
  columnLetter,
  sheetText,
  type CellValue,
  type Mark,
  type PlannedCell,
  type PlannedRow,
  type SheetPlan,
} from './cells.js';
import type { MethodRefs } from './method-sheet.js';
import { asUsedPlanner } from './as-used.js';
import { asUsedFields, asUsedHeader, fieldUnit, inputColumn, resultsLayout, RESULTS_SHEET, ROW_CHECK_HEADER, WORKLIST_ROW_HEADER, type ResultsColumn, type ResultsColumnKind, type ResultsLayout } from './results-layout.js';
import { canonicalValue } from './canonical.js';

export { asUsedFields, asUsedHeader, resultsLayout, RESULTS_SHEET, ROW_CHECK_HEADER, WORKLIST_ROW_HEADER, type ResultsColumn, type ResultsColumnKind, type ResultsLayout };
import { displayFormat, fitWidth, significantFormat, strongerMark } from './style.js';


export interface ResultsSheet {
  plan: SheetPlan;
  layout: ResultsLayout;
  /** Per formula column, how the sheet carries it (for the Method sheet). */
  formulaForms: string[];
  /** The input cells of a row as written (also what the row check and digest read). */
  inputValues(row: number): CellValue[];
}


// ---- input cells ----------------------------------------------------------------------------

const PLAIN_NUMBER = /^-?(?:0|[1-9]\d*)(?:\.\d+)?$/;

/**
 * How a worklist cell is stored: XLSX cells as they were; from a CSV, a cell of a
 * numeric field that reads as a number becomes that number, and a cell of any
 * other column only when it is plainly one (`5`, `0.25`, not `007` or `1.50`, which
 * stay text). Text is kept as written (see sheetText for the few characters XLSX
 * cannot hold).
 */
export function inputCellWriter(result: RecalcResult): (column: number, row: number) => CellValue {
  const { raw } = result;
  const numericField = new Array<boolean>(raw.headers.length).fill(false);
  const textField = new Array<boolean>(raw.headers.length).fill(false);
  for (const src of result.columnMap.fields.values()) {
    const kind = FIELD_SPECS.get(src.field)!.kind;
    if (kind === 'number') numericField[src.column] = true;
    else textField[src.column] = true;
  }
  const csv = raw.format.kind === 'csv';
  const format = result.table.numberFormat;
  return (column, row) => {
    const v: RawCell = raw.columns[column]![row] ?? null;
    if (v === null) return null;
    if (typeof v === 'number') return Number.isFinite(v) ? v : String(v);
    if (v === '') return null;
    if (csv && numericField[column]) {
      const parsed = result.readNumber(v);
      if (parsed !== undefined) return parsed;
    } else if (csv && !textField[column]) {
      const plain = format.decimal === ',' && /^-?\d+,\d+$/.test(v) ? v.replace(',', '.') : v;
      if (PLAIN_NUMBER.test(plain) && String(Number(plain)) === plain) return Number(plain);
    }
    return sheetText(v);
  };
}

/**
 * First 16 hex digits of SHA-256 over the row's input cells as written (JSON); from workbook format 4
 * on, their canonical values (numbers to 15 significant digits, as a spreadsheet program saves them).
 */
export function rowCheck(values: readonly CellValue[]): string {
  let hashed = values;
  // A copy only when a number is not canonical already (most inputs are short decimals).
  for (const v of values) {
    if (typeof v === 'number' && canonicalValue(v) !== v) {
      hashed = values.map(canonicalValue);
      break;
    }
  }
  // One-shot hash: a Hash object per row costs more than the hashing.
  return hash('sha256', JSON.stringify(hashed), 'hex').slice(0, 16);
}

// ---- formula templates ----------------------------------------------------------------------

const PLACEHOLDER = /\{\{([cpq]):(\d+)\}\}/;

type Part = string | { which: 'c' | 'p' | 'q'; column: number };
type Template = { parts: Part[] } | { unsupported: string };

function splitTemplate(text: string): Template {
  const parts: Part[] = [];
  const pieces = text.split(PLACEHOLDER);
  for (let i = 0; i < pieces.length; i++) {
    if (i % 3 === 0) {
      if (pieces[i]) parts.push(pieces[i]!);
    } else {
      parts.push({ which: pieces[i] as 'c' | 'p' | 'q', column: Number(pieces[i + 1]) });
      i++;
    }
  }
  return { parts };
}

function renderTemplate(t: { parts: Part[] }, rows: { c: number; p: number; q: number }): string {
  let s = '';
  for (const p of t.parts) s += typeof p === 'string' ? p : `${columnLetter(p.column)}${rows[p.which]}`;
  return s;
}

// ---- the sheet ------------------------------------------------------------------------------

export interface ResultsOptions {
  refs: MethodRefs;
  /** Live formulas (true) or values only. */
  formulas: boolean;
  /** result.flags by row (shared with the QC sheet). */
  flagsByRow: ReadonlyMap<number, readonly Flag[]>;
}

export function planResultsSheet(result: RecalcResult, options: ResultsOptions): ResultsSheet {
  const { refs } = options;
  const layout = resultsLayout(result);
  const { table, raw } = result;
  const n = result.rowsOut;
  const inputValue = inputCellWriter(result);
  const inputCount = raw.headers.length;
  const inputValues = (r: number): CellValue[] => {
    const values: CellValue[] = [];
    for (let c = 0; c < inputCount; c++) values.push(inputValue(c, r));
    return values;
  };
  const inputLetter = (column: number) => columnLetter(inputColumn(column));

  // Formula templates, per formula column and per (parent row?, pair row?).
  const compiled = result.compiled;
  const nodes = compiled.formulas.map((f) => f.node as MathNode); // the engine's parsed trees (opaque in RecalcResult)
  const isText = (s: string) => FIELD_SPECS.get(s as CanonicalField)?.kind === 'text';
  const cellColumn = (s: string) => (layout.asUsed.get(s) ?? layout.computed.get(s))?.column;
  const templates: Template[][] = nodes.map(() => []);
  const templateFor = (i: number, hasParent: boolean, hasPair: boolean): Template => {
    const key = (hasParent ? 1 : 0) | (hasPair ? 2 : 0);
    let t = templates[i]![key];
    if (!t) {
      const translated = toSheetFormula(nodes[i]!, {
        cellOf: (s) => {
          const c = cellColumn(s);
          return c === undefined ? undefined : `{{c:${c}}}`;
        },
        crossRowCellOf: (fn, s) => {
          if (fn === 'parent' ? !hasParent : !hasPair) return undefined;
          const c = cellColumn(s);
          return c === undefined ? undefined : `{{${fn === 'parent' ? 'p' : 'q'}:${c}}}`;
        },
        isText,
      });
      t = 'unsupported' in translated ? { unsupported: translated.unsupported } : splitTemplate(translated.formula);
      templates[i]![key] = t;
    }
    return t;
  };
  // An example row for the Method sheet: the first computed row with both a parent and a
  // pair row, else with one of them, else the first computed row.
  const { parentRow, pairRow } = result.links;
  const computedRows = (test: (r: number) => boolean) => {
    for (let r = 0; r < n; r++) if (!table.rowError[r] && test(r)) return r;
    return -1;
  };
  const example = [
    computedRows((r) => parentRow[r]! >= 0 && pairRow[r]! >= 0),
    computedRows((r) => parentRow[r]! >= 0 || pairRow[r]! >= 0),
    computedRows(() => true),
  ].find((r) => r >= 0);
  const formulaForms = result.method.formulas.map((_, i) => {
    const t = templateFor(i, true, true);
    if ('unsupported' in t) return `values only: no spreadsheet form (${t.unsupported})`;
    if (!options.formulas) return 'values only (the sheet is above the formula row limit)';
    if (example === undefined) return 'live formula';
    const e = templateFor(i, parentRow[example]! >= 0, pairRow[example]! >= 0);
    return 'parts' in e
      ? `live formula, e.g. row ${example + 2}: =${renderTemplate(e, { c: example + 2, p: parentRow[example]! + 2, q: pairRow[example]! + 2 })}`
      : 'live formula';
  });

  // Marks and notes per row.
  const { flagsByRow } = options;
  const notesByRow = groupBy(result.notes, (note) => note.row);
  const targetColumn = (column: string | undefined): number => targetColumnOf(result, layout, column);

  // Display formats and widths.
  const numFmt = new Map<number, string>();
  for (const col of layout.asUsed.values()) {
    const values = table.numbers.get(col.field!);
    if (values) numFmt.set(col.column, displayFormat(values));
  }
  for (const def of result.method.formulas) {
    numFmt.set(layout.computed.get(def.name)!.column, displayFormat(result.computed.get(def.name)!, { percent: def.unit === '%' || def.name.endsWith('_pct') }));
  }
  const asUsedPlanners = [...layout.asUsed.values()].map((col) =>
    asUsedPlanner(result, { col, layout, refs, inputValue, inputLetter, numFmt: numFmt.get(col.column) }),
  );
  const sampleIds = table.texts.get('sample_id')!;
  const analytes = table.texts.get('analyte')!;
  const widths = layout.columns.map((col) => {
    if (col.kind === 'input') {
      const texts = [col.header];
      for (let r = 0; r < Math.min(n, 200); r++) {
        const v = inputValue(col.inputIndex!, r);
        if (v !== null) texts.push(String(v));
      }
      return fitWidth(texts, { max: 40 });
    }
    if (col.kind === 'sample') return fitWidth([col.header, ...sampleIds.slice(0, 500)], { min: 10, max: 30 });
    if (col.kind === 'analyte') return fitWidth([col.header, ...analytes.slice(0, 500)], { min: 10, max: 30 });
    if (col.kind === 'flags') return fitWidth([col.header, ...result.rowFlags.slice(0, 500)], { min: 10, max: 40 });
    if (col.kind === 'row-check') return 18;
    if (col.kind === 'reported') return fitWidth([col.header, ...result.qc.reported.slice(0, 500)], { min: 10, max: 40 });
    return fitWidth([col.header, '0.000000000'], { min: 10, max: 30 });
  });

  const headerNotes = headerNotesFor(result, layout, formulaForms);
  const headerRow: PlannedRow = {
    cells: layout.columns.map((col) =>
      cell(col.header, {
        style:
          col.kind === 'input'
            ? 'header-input'
            : col.kind === 'as-used'
              ? 'header-as-used'
              : col.kind === 'computed'
                ? 'header-computed'
                : 'header-status',
        note: headerNotes.get(col.column),
      }),
    ),
    labels: layout.headers,
  };

  // Difference lines name an as-used cell, and the leading sample_id and analyte, with the worklist column it reads.
  const rowLabels = layout.columns.map((col) => {
    const field = col.kind === 'sample' ? 'sample_id' : col.kind === 'analyte' ? 'analyte' : col.kind === 'as-used' ? col.field! : undefined;
    const src = field !== undefined && isCanonicalField(field) ? result.columnMap.fields.get(field) : undefined;
    return src ? `${col.header} from column ${columnLetter(inputColumn(src.column))}` : col.header;
  });
  const computedColumns = result.method.formulas.map((def) => {
    const col = layout.computed.get(def.name)!;
    // Numbers that are not percentages show the method's significant figures, cell by cell (issue 14).
    const bySignificance = !(def.unit === '%' || def.name.endsWith('_pct'));
    return { index: col.column - 1, values: result.computed.get(def.name)!, numFmt: numFmt.get(col.column), bySignificance };
  });
  const sig = result.method.reporting.significantFigures;
  // The expanded uncertainty: the engine's values (U % of the analyte × |result|), the source in the header's note.
  const uncertaintyColumns = layout.uncertainty.map((col) => {
    const values = col.name === UNCERTAINTY_COLUMNS.k ? result.uncertainty!.k : result.uncertainty!.expanded;
    return { index: col.column - 1, values, numFmt: displayFormat(values) };
  });
  const row = (index: number): PlannedRow => {
    if (index === 0) return headerRow;
    const r = index - 1;
    const R = index + 1;
    const cells: (PlannedCell | undefined)[] = new Array(layout.columns.length);
    cells[layout.sampleId.column - 1] = cell(sampleIds[r]! || null);
    cells[layout.analyte.column - 1] = cell(analytes[r]! || null);
    const inputs = inputValues(r);
    for (let c = 0; c < inputs.length; c++) {
      const v = inputs[c]!;
      if (v === null) continue;
      const rawCell = raw.columns[c]![r];
      // Input values are storable already (inputCellWriter); the plain object saves a copy per cell.
      cells[inputColumn(c) - 1] =
        typeof rawCell === 'string' && rawCell.length > MAX_CELL_TEXT
          ? cell(v, {
              mark: 'note',
              note: `This cell of the worklist holds ${rawCell.length} characters; a spreadsheet cell holds ${MAX_CELL_TEXT}, so the first ${MAX_CELL_TEXT} are written here. phasebook computed with the whole text; the results CSV has it.`,
            })
          : { value: v };
    }
    cells[layout.worklistRow.column - 1] = { value: raw.rowNumbers[r]! };
    // An input error, or a carried row (a calibrator): no computed cells.
    const error = table.rowError[r] === 1 || table.carried[r] === 1;
    const live = options.formulas && !error;
    for (const planner of asUsedPlanners) cells[planner.column - 1] = planner.plan(r, R, live);

    const parentRow = result.links.parentRow[r]!;
    const pairRow = result.links.pairRow[r]!;
    for (let i = 0; i < computedColumns.length; i++) {
      const { index, values, bySignificance } = computedColumns[i]!;
      const v = values[r]!;
      const fmt = bySignificance && Number.isFinite(v) ? significantFormat(v, sig) : computedColumns[i]!.numFmt;
      const value = Number.isFinite(v) ? v : null;
      if (error) {
        cells[index] = { value: null, numFmt: fmt };
        continue;
      }
      const t = templateFor(i, parentRow >= 0, pairRow >= 0);
      if ('unsupported' in t) {
        cells[index] = { value, numFmt: fmt, mark: 'note', note: `No spreadsheet formula: ${t.unsupported}. The engine's value is written.` };
      } else if (!live) {
        cells[index] = { value, numFmt: fmt };
      } else {
        cells[index] = { value: value ?? '', formula: renderTemplate(t, { c: R, p: parentRow + 2, q: pairRow + 2 }), numFmt: fmt };
      }
    }

    for (const { index, values, numFmt: fmt } of uncertaintyColumns) {
      const v = values[r]!;
      cells[index] = { value: Number.isFinite(v) ? v : null, numFmt: fmt };
    }

    const flags = result.rowFlags[r]!;
    const status = result.qc.status[r]!;
    cells[layout.flags.column - 1] = cell(flags === '' ? null : flags);
    cells[layout.qcStatus.column - 1] = cell(status === '' ? null : status);
    const reported = result.qc.reported[r]!;
    cells[layout.reported.column - 1] = cell(reported === '' ? null : reported);
    cells[layout.rowCheck.column - 1] = cell(rowCheck(inputs));

    // Marks: each flag on its cell, all of the row's flags on the flags cell.
    const rowFlags = flagsByRow.get(r);
    if (rowFlags) {
      const byColumn = new Map<number, { mark: Mark | undefined; lines: string[] }>();
      let worst: Mark | undefined;
      const all: string[] = [];
      for (const f of rowFlags) {
        const mark: Mark = f.code === 'INPUT_ERROR' || FAILING_CODES.has(f.code) ? 'fail' : 'inform';
        const line = `${f.code}: ${f.message}`;
        worst = strongerMark(worst, mark);
        all.push(line);
        const c = targetColumn(f.column);
        if (c === layout.flags.column) continue;
        const entry = byColumn.get(c) ?? { mark: undefined, lines: [] };
        entry.mark = strongerMark(entry.mark, mark);
        entry.lines.push(line);
        byColumn.set(c, entry);
      }
      for (const [c, entry] of byColumn) addMark(cells, c, entry.mark!, entry.lines.join('\n'));
      addMark(cells, layout.flags.column, worst!, all.join('\n'));
    }
    if (status === 'fail') {
      addMark(cells, layout.qcStatus.column, 'fail', 'This control row fails its QC: the flags cell and the Flags sheet say why.');
    }
    for (const note of notesByRow.get(r) ?? []) {
      const c = note.column === undefined ? layout.flags.column : targetColumn(note.column);
      addMark(cells, c, 'note', note.message);
    }
    return { cells, context: { worklistRow: raw.rowNumbers[r]!, sampleId: sampleIds[r]! }, labels: rowLabels };
  };

  const plan: SheetPlan = {
    name: RESULTS_SHEET,
    widths,
    outlineLevels: layout.columns.map((c) => c.outlineLevel),
    // The header row, and sample_id and analyte beside every column scrolled to.
    frozen: { rows: 1, columns: 2 },
    autoFilter: { row: 1, columns: layout.columns.length },
    rowCount: n + 1,
    row,
  };
  return { plan, layout, formulaForms, inputValues };
}

/** The Results column a flag or note about `column` marks (the flags column when it names none). */
export function targetColumnOf(result: RecalcResult, layout: ResultsLayout, column: string | undefined): number {
  if (column === undefined) return layout.flags.column;
  const computed = layout.computed.get(column);
  if (computed) return computed.column;
  if (isCanonicalField(column)) {
    const src = result.columnMap.fields.get(column);
    if (src) return inputColumn(src.column);
    const asUsed = layout.asUsed.get(column);
    if (asUsed) return asUsed.column;
    return layout.flags.column;
  }
  const i = result.raw.headers.indexOf(column);
  return i >= 0 ? inputColumn(i) : layout.flags.column;
}

function addMark(cells: (PlannedCell | undefined)[], column: number, mark: Mark, note: string): void {
  const c = cells[column - 1] ?? cell(null);
  cells[column - 1] = {
    ...c,
    mark: strongerMark(c.mark, mark),
    note: c.note ? `${c.note}\n${note}` : note,
  };
}

// ---- header notes ---------------------------------------------------------------------------

function headerNotesFor(result: RecalcResult, layout: ResultsLayout, formulaForms: readonly string[]): Map<number, string> {
  const notes = new Map<number, string>();
  const readFrom = (field: CanonicalField): string => {
    const src = result.columnMap.fields.get(field);
    return src ? `the worklist column "${src.header}" (column ${columnLetter(inputColumn(src.column))} here)` : 'the method (the worklist has no column for it)';
  };
  notes.set(layout.sampleId.column, `The sample as the run read it from ${readFrom('sample_id')}.`);
  notes.set(layout.analyte.column, `The analyte as the run read it from ${readFrom('analyte')}.`);
  notes.set(
    layout.reported.column,
    'The result as reported (the results CSV\'s reported_result): to the method\'s significant figures; "<" and the reporting limit below it; above the calibration range, the method\'s words and the dilution it needs.',
  );
  notes.set(layout.worklistRow.column, 'The row of this sample in the worklist file as given; messages and the Flags sheet name it.');
  for (const col of layout.asUsed.values()) {
    const field = col.field!;
    if (field === 'surrogate') {
      notes.set(col.column, "1 when the method marks the row's analyte as a surrogate (Analytes table on the Method sheet), else 0.");
      continue;
    }
    const src = result.columnMap.fields.get(field as CanonicalField);
    const unit = fieldUnit(result, field);
    const parts = [`${field} as the formulas read it${unit ? `, in ${unit}` : ''}.`];
    if (src) {
      const factor = src.factor === undefined ? `converted from ${src.fromUnit} with the analyte's molar mass` : src.factor === 1 ? '' : `× ${src.factor} (${src.fromUnit} → ${src.toUnit})`;
      parts.push(`From the worklist column "${src.header}"${factor ? ` ${factor}` : ''}.`);
    } else {
      parts.push('The worklist has no column for it.');
    }
    parts.push('Empty cells: see "when the cell is empty" in the Fields table of the Method sheet.');
    notes.set(col.column, parts.join(' '));
  }
  result.method.formulas.forEach((def, i) => {
    const col = layout.computed.get(def.name)!;
    notes.set(col.column, `${def.expr}${def.description ? `\n${def.description}` : ''}\n${formulaForms[i]!.split(', e.g.')[0]}`);
  });
  const u = result.uncertainty;
  for (const col of layout.uncertainty) {
    if (!u) break;
    if (col.name === UNCERTAINTY_COLUMNS.k) {
      notes.set(col.column, 'The coverage factor k of the expanded uncertainty beside it (k = 2: about 95 % coverage).');
      continue;
    }
    const lines = [...u.byAnalyte.values()].map((a) => `${a.analyte}: U = ${a.pct.toPrecision(4)} % of the result (k = ${a.k}), ${a.source}`);
    notes.set(
      col.column,
      [`Expanded uncertainty U of each sample result, in ${u.unit}: U % of its analyte × |${RESULT_COLUMN}|. Samples of an analyte without a U stay empty.`, ...lines].join('\n'),
    );
  }
  notes.set(layout.flags.column, 'Flag codes of the row, ";"-separated; a marked cell says why, the Flags sheet lists every flag.');
  notes.set(layout.rowCheck.column, "First 16 hex digits of a SHA-256 over this row's input cells as written; phasebook verify recomputes it to find rows changed after writing.");
  return notes;
}
