/**
 * `phasebook verify WORKBOOK`: is this workbook what phasebook wrote, and do its
 * numbers follow from its own inputs?
 *
 * 1. Read the workbook; a file that is not a phasebook workbook stops (StopError).
 * 2. Re-read the method from the Method sheet's text and rebuild the worklist from
 *    the Results sheet's input columns (worklist row numbers and reading problems
 *    from the Provenance sheet).
 * 3. Recalculate (recalculateTable) and plan the workbook again with the facts of
 *    the original run (time, command, versions) as stored, and the Trends sheet's
 *    series rebuilt from the points it lists (the history itself is not needed).
 * 4. Compare every cell of every sheet, formulas included, with the plan; recompute
 *    the integrity digest from the stored cells and compare it with the recorded one;
 *    report worklist rows that are missing or new.
 *
 * Every difference is data (a Difference); nothing is printed here.
 */
import { StopError } from '../errors.js';
import { parseMethod } from '../method/load.js';
import type { Method } from '../domain/method.js';
import { recalculateTable, type RecalcResult } from '../pipeline.js';
import type { RawCell, RawTable, RowProblem } from '../read/types.js';
import { columnLetter, isEmptyValue, titleRow, type CellValue, type RowContext, type SheetPlan } from '../write/workbook/cells.js';
import { ColumnChecks, IntegrityDigest, parseColumnChecks, sha256Text } from '../write/workbook/digest.js';
import { columnNumber } from './shared-formula.js';
import { FLAGS_SHEET } from '../write/workbook/flags-sheet.js';
import { METHOD_SHEET, METHOD_TEXT_TITLE, readInHouseLimits, readLimitRows, readMethodText, readUncertaintyPoints } from '../write/workbook/method-sheet.js';
import { uncertaintyFromPoints } from '../figures/from-history.js';
import { WORKBOOK_FORMAT } from '../write/workbook/options.js';
import { SHEET_ORDER, planWorkbook } from '../write/workbook/workbook-plan.js';
import {
  FORMULAS_LIVE,
  KEYS,
  PROVENANCE_MARKER,
  PROVENANCE_SHEET,
  READING_PROBLEMS_TITLE,
  parseNumberFormatCode,
} from '../write/workbook/provenance-sheet.js';
import { decideFormat, type NumberFormat } from '../columns/number-format.js';
import { QC_SHEET } from '../write/workbook/qc-sheet.js';
import { RESULTS_SHEET, WORKLIST_ROW_HEADER } from '../write/workbook/results-sheet.js';
import { FIRST_INPUT_COLUMN, inputColumn } from '../write/workbook/results-layout.js';
import { SUMMARY_SHEET } from '../write/workbook/summary-sheet.js';
import { MIN_POINTS } from '../history/trends.js';
import { readTrendsSheet, TRENDS_SHEET } from '../write/workbook/trends-sheet.js';
import { compareSheet, sameValue } from './sheet-diff.js';
import { isCanonicalField } from '../domain/fields.js';
import { SIGNATURES_SHEET, checkSignatures, contentDigest, readSignatures, type SignatureCheck } from './signatures.js';
import { showValue, type Difference } from './difference.js';
import { readStoredWorkbook, type StoredCell, type StoredSheet, type StoredWorkbook } from './read.js';

export interface VerifyOptions {
  /** Refuse workbooks that unpack past this many bytes (default 512 MiB). */
  maxUnpackedBytes?: number;
  /** Fingerprints (signatures.ts keyFingerprint) of the keys whose signatures are trusted; undefined: none given. */
  trusted?: ReadonlySet<string>;
}

export interface VerifyReport {
  path: string;
  differences: Difference[];
  /** Data rows found on the Results sheet. */
  rows: number;
  /** True when the digest recorded in the Provenance sheet matches the stored cells; undefined when it could not be checked. */
  digestMatches: boolean | undefined;
  /** Formula cells whose saving program kept no result (openpyxl): their values were recomputed, not read. */
  recomputedCells: number;
  /** The sign-off cells as typed (not checked). */
  signOff: SignOffEntry[];
  /** SHA-256 of the workbook's canonical content (what a signature signs). */
  content: string;
  /** Every signature on the Signatures sheet, in order, checked. */
  signatures: SignatureCheck[];
}

/** A sign-off cell the reviewer typed into. */
export interface SignOffEntry {
  sheet: string;
  address: string;
  /** What the cell is for ("reviewed by"). */
  label: string;
  text: string;
}

/** The version number of the one layout this phasebook writes and reads. */
const FORMAT_VERSION = Number(WORKBOOK_FORMAT.split(' ')[1]);

const notPhasebook = (path: string, why: string) => new StopError('input', `is not a phasebook workbook: ${why}`, { file: path });

export async function verifyWorkbook(path: string, options: VerifyOptions = {}): Promise<VerifyReport> {
  const stored = await readStoredWorkbook(path, { maxUnpackedBytes: options.maxUnpackedBytes });
  const provenance = stored.sheet(PROVENANCE_SHEET);
  if (!provenance) throw notPhasebook(path, `it has no "${PROVENANCE_SHEET}" sheet`);
  const marker = provenance.row(1);
  if (marker.get(1)?.value !== PROVENANCE_MARKER) {
    throw notPhasebook(path, `cell ${PROVENANCE_SHEET}!A1 holds ${showValue(marker.get(1)?.value)}, expected "${PROVENANCE_MARKER}"`);
  }
  const formatName = marker.get(2)?.value;
  if (formatName !== WORKBOOK_FORMAT) {
    const readable = `"${WORKBOOK_FORMAT}"`;
    // An earlier phasebook laid its sheets out otherwise: comparing them with this version's plan would call an
    // untouched workbook changed, so it is refused with the way to check it instead.
    if (typeof formatName === 'string' && /^phasebook-workbook \d+$/.test(formatName)) {
      throw new StopError(
        'input',
        `was written in the format "${formatName}" by ${Number(formatName.split(' ')[1]) > FORMAT_VERSION ? 'a later' : 'an earlier'} phasebook, whose sheets this version lays out differently; ` +
          `this phasebook verifies ${readable}: verify it with the phasebook version its Provenance sheet names`,
        { file: path },
      );
    }
    throw notPhasebook(path, `it was written in the format ${showValue(formatName)}; this phasebook reads ${readable}`);
  }
  const content = contentDigest(stored);
  const signatures = checkSignatures(content, readSignatures(stored.sheet(SIGNATURES_SHEET)), options.trusted);
  const finish = (
    differences: Difference[],
    results: StoredSheet,
    extra: { digestMatches: boolean | undefined; recomputedCells?: number; signOff?: SignOffEntry[] },
  ): VerifyReport => ({ path, differences, rows: Math.max(0, results.lastRow - 1), recomputedCells: 0, signOff: [], content, signatures, ...extra });
  const results = stored.sheet(RESULTS_SHEET);
  const methodSheet = stored.sheet(METHOD_SHEET);
  if (!results) throw notPhasebook(path, `it has no "${RESULTS_SHEET}" sheet`);
  if (!methodSheet) throw notPhasebook(path, `it has no "${METHOD_SHEET}" sheet`);

  const facts = keyValues(provenance);
  const need = (key: string): CellValue => {
    const v = facts.get(key)?.value;
    if (v === undefined) throw notPhasebook(path, `the ${PROVENANCE_SHEET} sheet has no "${key}"`);
    return v;
  };
  const needNumber = (key: string): number => {
    const v = need(key);
    if (typeof v !== 'number') throw notPhasebook(path, `the ${PROVENANCE_SHEET} sheet's "${key}" is ${showValue(v)}, expected a number`);
    return v;
  };
  const needText = (key: string): string => {
    const v = need(key);
    return v === null ? '' : String(v);
  };
  const inputCount = needNumber(KEYS.inputColumns);
  const differences: Difference[] = [];

  const order = stored.order.filter((name, i, all) => !(name === SIGNATURES_SHEET && i === all.length - 1)).join(', ');
  if (order !== SHEET_ORDER.join(', ')) {
    differences.push({ sheet: 'Workbook', message: `the sheets are ${order}, expected ${SHEET_ORDER.join(', ')}` });
  }

  // The method, from its text on the Method sheet.
  const text = readMethodText(methodSheet);
  let method: Method;
  try {
    method = parseMethod(text.text, { file: needText(KEYS.methodFile) });
  } catch (err) {
    if (!(err instanceof StopError)) throw err;
    differences.push({
      sheet: METHOD_SHEET,
      address: `B${text.firstRow}`,
      label: METHOD_TEXT_TITLE,
      message: `the method text no longer reads as a method: ${err.describe()}`,
    });
    return finish(differences, results, { digestMatches: undefined });
  }

  // The worklist, from the Results sheet's input columns.
  // The number format the run decided, read back so that every text cell is read the same way again.
  const decimalComma = facts.get(KEYS.decimalComma)?.value === 'yes';
  const numberFormat =
    parseNumberFormatCode(String(facts.get(KEYS.numberFormatCode)?.value ?? ''), String(facts.get(KEYS.numberFormat)?.value ?? '')) ??
    decideFormat([], { declared: { decimal_mark: decimalComma ? ',' : '.' } }); // a version 2 workbook: the mark only
  const raw = rebuildWorklist(results, provenance, { path, inputCount, decimalComma, numberFormat });
  let result: RecalcResult;
  try {
    result = recalculateTable(raw, {
      method,
      inHouse: readInHouseLimits(methodSheet),
      uncertainty: storedUncertainty(methodSheet, method),
      worklist: {
        path: needText(KEYS.worklistName),
        name: needText(KEYS.worklistName),
        bytes: needNumber(KEYS.worklistBytes),
        sha256: needText(KEYS.worklistSha),
      },
    });
  } catch (err) {
    if (!(err instanceof StopError)) throw err;
    differences.push({ sheet: RESULTS_SHEET, address: 'A1', message: `the worklist columns can no longer be read: ${err.describe()}` });
    return finish(differences, results, { digestMatches: undefined });
  }

  // The Trends sheet's series, rebuilt from the points it lists.
  const trendsSheet = stored.sheet(TRENDS_SHEET);
  const trends = trendsSheet ? readTrendsSheet(trendsSheet, { defaultMinPoints: MIN_POINTS }) : undefined;
  const plan = planWorkbook(result, {
    history: trends?.history,
    minPoints: trends?.minPoints,
    run: {
      timestamp: needText(KEYS.time),
      command: needText(KEYS.command),
      version: needText(KEYS.version),
      node: needText(KEYS.node),
    },
    formulaRowLimit: needNumber(KEYS.formulaRowLimit),
    maxNotes: needNumber(KEYS.maxNotes),
    formulas: need(KEYS.formulas) === FORMULAS_LIVE,
    readAs: needText(KEYS.readAs),
  });

  // Compare sheet by sheet, taking the digest over the stored Results rows on the way.
  const digest = new IntegrityDigest();
  const recomputed = { cells: 0 };
  const sheetOrMissing = (name: string): StoredSheet | undefined => {
    const s = stored.sheet(name);
    if (!s) differences.push({ sheet: name, message: 'the sheet is missing' });
    return s;
  };
  // Root causes first: the method, then the Results rows, then what follows from them.
  differences.push(...compareSheet(plan.method, methodSheet, { recomputed }));
  const resultsWidth = plan.results.layout.columns.length;
  differences.push(...missingRows(stored, provenance, raw));
  const columnChecks = new ColumnChecks(plan.results.layout.inputCount, FIRST_INPUT_COLUMN);
  const resultsDifferences = compareSheet(plan.results.plan, results, {
    recomputed,
    onStoredRow: (_r, cells) => {
      const values = rowValues(cells, resultsWidth);
      digest.addResultsRow(values, { formulas: formulaCells(cells), columnChecks });
    },
  });
  const checks = columnChecks.text();
  differences.push(...namedInputChanges(resultsDifferences, { result, plan, results, changedColumns: changedColumns(facts.get(KEYS.columnChecks)?.value, checks) }));
  const qc = sheetOrMissing(QC_SHEET);
  if (qc) differences.push(...compareSheet(plan.qc, qc, { recomputed }));
  const flags = sheetOrMissing(FLAGS_SHEET);
  if (flags) differences.push(...compareSheet(plan.flags, flags, { recomputed }));
  if (trendsSheet) differences.push(...compareSheet(plan.trends.plan, trendsSheet, { recomputed }));
  else differences.push({ sheet: TRENDS_SHEET, message: 'the sheet is missing' });
  const summary = sheetOrMissing(SUMMARY_SHEET);
  if (summary) differences.push(...compareSheet(plan.summary, summary, { recomputed }));

  digest.addMethod(sha256Text(text.text), readLimitRows(methodSheet));
  digest.addTrends(trends?.digestRows ?? []);
  const hex = digest.hex();
  const recorded = facts.get(KEYS.digest)?.value;
  const provenancePlan = plan.provenance(hex, checks);
  differences.push(...compareSheet(provenancePlan, provenance, { recomputed }));
  return finish(differences, results, { digestMatches: recorded === hex, recomputedCells: recomputed.cells, signOff: signOff(provenance, provenancePlan) });
}

/**
 * Before each row check that no longer matches, the input cell that was typed over, with both values: the
 * one in the cell now, and the one the formulas read when the workbook was written (the saved result of
 * the as-used cell that reads it, unless the saving program recalculated it). Where nothing saved tells
 * which input changed, the row check's line says so.
 */
/** Input columns (letters) whose column check no longer matches; empty when the workbook keeps none. */
function changedColumns(stored: CellValue | undefined, recomputed: string | undefined): string[] {
  if (recomputed === undefined || typeof stored !== 'string') return [];
  const was = parseColumnChecks(stored);
  const now = parseColumnChecks(recomputed);
  if (!was || !now) return [];
  return [...now].filter(([letter, check]) => was.get(letter) !== check).map(([letter]) => letter);
}

function namedInputChanges(
  differences: Difference[],
  at: { result: RecalcResult; plan: ReturnType<typeof planWorkbook>; results: StoredSheet; changedColumns: readonly string[] },
): Difference[] {
  const { layout } = at.plan.results;
  const rowOf = (d: Difference) => Number(/\d+$/.exec(d.address ?? '')?.[0] ?? 0);
  // Per sheet row whose row check differs: the input lines, and the row check's own line.
  const byRow = new Map<number, Difference[]>();
  for (const d of differences) {
    if (d.address !== `${layout.rowCheck.letter}${rowOf(d)}`) continue;
    const sheetRow = rowOf(d);
    const planned = sheetRow - 2 < at.result.rowsOut ? at.plan.results.plan.row(sheetRow - 1) : undefined;
    const stored = at.results.row(sheetRow);
    const named: Difference[] = [];
    for (const col of layout.asUsed.values()) {
      const src = isCanonicalField(col.field!) ? at.result.columnMap.fields.get(col.field) : undefined;
      const cell = stored.get(col.column);
      const p = planned?.cells[col.column - 1];
      if (!src || !cell || cell.noCachedValue || p?.formula === undefined || sameValue(p.value, cell.value)) continue;
      const address = `${columnLetter(inputColumn(src.column))}${sheetRow}`;
      if (named.some((n) => n.address === address)) continue;
      const now = stored.get(inputColumn(src.column))?.value ?? null;
      const unit = /\[([^\]]+)\]$/.exec(col.header)?.[1];
      named.push({
        ...d,
        address,
        label: `column ${JSON.stringify(at.result.raw.headers[src.column] ?? '')}`,
        message:
          `typed over after writing: the cell holds ${showValue(now)}; when written, the formulas read it as ` +
          `${showValue(cell.value)}${unit ? ` ${unit}` : ''} (the saved result of ${RESULTS_SHEET}!${col.letter}${sheetRow})`,
      });
    }
    // No saved result shows the value as written: the column checks name the cell, its value now is all there is.
    // With one changed column the cell is certain; with several, each is a candidate in this row.
    if (named.length === 0) {
      const certain = at.changedColumns.length === 1;
      for (const letter of at.changedColumns) {
        const column = columnNumber(letter);
        const others = at.changedColumns.filter((l) => l !== letter).map((l) => `${l}${sheetRow}`);
        named.push({
          ...d,
          address: `${letter}${sheetRow}`,
          label: `column ${JSON.stringify(at.result.raw.headers[column - FIRST_INPUT_COLUMN] ?? '')}`,
          message:
            (certain
              ? 'changed after writing (its row check and column check no longer match)'
              : `this cell or ${others.join(', ')} changed after writing (the row check names the row, the column checks columns ${at.changedColumns.join(', ')})`) +
            `: the cell holds ${showValue(stored.get(column)?.value ?? null)}; ` +
            'the value as written is not kept in the workbook (the saving program recalculated or dropped the results that showed it)',
        });
      }
    }
    const check =
      named.length > 0
        ? d
        : { ...d, message: `${d.message}: an input cell of this row was changed after writing; the saved results no longer show which (the saving program recalculated them)` };
    byRow.set(sheetRow, [...named, check]);
  }
  if (byRow.size === 0) return differences;
  // Root causes first: a row's input lines and row check come before what follows from them in that row.
  const out: Difference[] = [];
  for (const d of differences) {
    const first = byRow.get(rowOf(d));
    if (first) {
      out.push(...first);
      byRow.delete(rowOf(d));
    }
    if (d.address !== `${layout.rowCheck.letter}${rowOf(d)}`) out.push(d);
  }
  return out;
}


/** Which cells of a stored row hold a formula, by 0-based column. */
function formulaCells(cells: ReadonlyMap<number, StoredCell>): boolean[] {
  const out: boolean[] = [];
  for (const [c, cell] of cells) if (cell.formula !== undefined) out[c - 1] = true;
  return out;
}

/** The sign-off cells (the reviewer's to fill in) as typed: reported, never compared. */
function signOff(stored: StoredSheet, plan: SheetPlan): SignOffEntry[] {
  const out: SignOffEntry[] = [];
  for (let i = 0; i < plan.rowCount; i++) {
    const row = plan.row(i);
    row.cells.forEach((c, col) => {
      if (!c?.free) return;
      const typed = stored.row(i + 1).get(col + 1);
      const label = row.cells[0]?.value;
      if (typed && !isEmptyValue(typed.value)) {
        out.push({
          sheet: plan.name,
          address: `${columnLetter(col + 1)}${i + 1}`,
          label: label === null || label === undefined ? '' : String(label),
          text: typed.date ?? String(typed.value),
        });
      }
    });
  }
  return out;
}

/** Column A key → column B cell of the Provenance sheet (the first time a key appears). */
/**
 * The expanded uncertainty derived again from the recoveries the Method sheet lists (none when it lists
 * none), by the derivation the run used; a method's fixed U comes from the method text itself.
 */
function storedUncertainty(sheet: StoredSheet, method: Method) {
  const listed = readUncertaintyPoints(sheet);
  return listed && uncertaintyFromPoints(listed.points, { method, until: listed.until, historyFile: listed.file });
}

function keyValues(sheet: StoredSheet): Map<string, StoredCell> {
  const out = new Map<string, StoredCell>();
  for (let r = 1; r <= sheet.lastRow; r++) {
    const cells = sheet.row(r);
    const key = cells.get(1)?.value;
    if (typeof key === 'string' && !out.has(key)) out.set(key, cells.get(2) ?? { value: null });
  }
  return out;
}

function rowValues(cells: ReadonlyMap<number, StoredCell>, width: number): CellValue[] {
  const w = Math.max(width, cells.size ? Math.max(...cells.keys()) : 0);
  const out = new Array<CellValue>(w).fill(null);
  for (const [c, cell] of cells) out[c - 1] = cell.value;
  return out;
}

/** The worklist as the Results sheet holds it: its input columns, worklist row numbers, reading problems. */
function rebuildWorklist(
  results: StoredSheet,
  provenance: StoredSheet,
  options: { path: string; inputCount: number; decimalComma: boolean; numberFormat: NumberFormat },
): RawTable {
  const n = options.inputCount;
  const header = results.row(1);
  const headers: string[] = [];
  for (let i = 0; i < n; i++) {
    const v = header.get(inputColumn(i))?.value;
    headers.push(v === null || v === undefined ? '' : String(v));
  }
  const worklistRowColumn = inputColumn(n);
  const columns: RawCell[][] = headers.map(() => []);
  const rowNumbers: number[] = [];
  for (let r = 2; r <= results.lastRow; r++) {
    const cells = results.row(r);
    for (let i = 0; i < n; i++) columns[i]!.push(cells.get(inputColumn(i))?.value ?? null);
    const wr = cells.get(worklistRowColumn)?.value;
    rowNumbers.push(typeof wr === 'number' && Number.isInteger(wr) && wr > 0 ? wr : r);
  }
  const byWorklistRow = new Map<number, number>();
  rowNumbers.forEach((w, i) => {
    if (!byWorklistRow.has(w)) byWorklistRow.set(w, i);
  });
  const rowProblems: RowProblem[] = [];
  const title = titleRow(provenance, READING_PROBLEMS_TITLE);
  if (title > 0) {
    for (let r = title + 2; r <= provenance.lastRow; r++) {
      const cells = provenance.row(r);
      const w = cells.get(1)?.value;
      if (typeof w !== 'number') break;
      const row = byWorklistRow.get(w);
      if (row === undefined) continue;
      const column = cells.get(2)?.value;
      rowProblems.push({ row, column: column === null || column === undefined ? undefined : String(column), message: String(cells.get(3)?.value ?? '') });
    }
  }
  return {
    source: options.path,
    headers,
    columns,
    rowCount: rowNumbers.length,
    rowNumbers: Int32Array.from(rowNumbers),
    rowProblems,
    format: { kind: 'xlsx', decimalComma: options.decimalComma, numberFormat: options.numberFormat },
  };
}

/** Worklist rows the Provenance sheet lists that the Results sheet no longer holds, and rows it never listed. */
function missingRows(stored: StoredWorkbook, provenance: StoredSheet, raw: RawTable): Difference[] {
  const out: Difference[] = [];
  const listed = keyValues(provenance).get(KEYS.worklistRows)?.value;
  if (typeof listed !== 'string' && typeof listed !== 'number') return out;
  const expected = parseRanges(String(listed));
  if (expected === undefined) return out;
  const present = new Set(raw.rowNumbers);
  const expectedSet = new Set(expected);
  // Where each missing row would have been: after the last present row before it.
  let sheetRow = 2;
  let next = 0;
  const rows = Array.from(raw.rowNumbers);
  for (const w of expected) {
    while (next < rows.length && rows[next]! < w) {
      next++;
      sheetRow = next + 2;
    }
    if (present.has(w)) continue;
    const before = next > 0 ? `worklist row ${rows[next - 1]}` : 'the header';
    const after = next < rows.length ? `worklist row ${rows[next]}` : 'the end';
    out.push({
      sheet: RESULTS_SHEET,
      address: `A${sheetRow}`,
      context: { worklistRow: w, sampleId: sampleIdOf(stored, w) ?? '(not recorded on the QC or Flags sheet)' },
      message: `the row is missing: it was written between ${before} and ${after} but is no longer in the sheet (deleted?)`,
    });
  }
  rows.forEach((w, i) => {
    if (!expectedSet.has(w)) {
      out.push({
        sheet: RESULTS_SHEET,
        address: `${columnLetter(inputColumn(raw.headers.length))}${i + 2}`,
        label: WORKLIST_ROW_HEADER,
        message: `worklist row ${w} was not in the workbook as written (added?)`,
      });
    }
  });
  return out;
}

/** A worklist row's sample id as the QC or Flags sheet recorded it. */
function sampleIdOf(stored: StoredWorkbook, worklistRow: number): string | undefined {
  for (const name of [QC_SHEET, FLAGS_SHEET]) {
    const sheet = stored.sheet(name);
    if (!sheet) continue;
    for (let r = 1; r <= sheet.lastRow; r++) {
      const cells = sheet.row(r);
      // Both sheets: worklist row in column A, sample_id in column C.
      if (cells.get(1)?.value !== worklistRow) continue;
      const id = cells.get(3)?.value;
      if (id !== null && id !== undefined) return String(id);
    }
  }
  return undefined;
}

/** `2-41` or `2-10, 12-41` → the row numbers; undefined when unreadable. */
export function parseRanges(text: string): number[] | undefined {
  const out: number[] = [];
  if (text.trim() === '') return out;
  for (const part of text.split(',')) {
    const m = /^\s*(\d+)(?:\s*-\s*(\d+))?\s*$/.exec(part);
    if (!m) return undefined;
    const a = Number(m[1]);
    const b = m[2] === undefined ? a : Number(m[2]);
    if (b < a || b - a > 10_000_000) return undefined;
    for (let x = a; x <= b; x++) out.push(x);
  }
  return out;
}

export type { Difference } from './difference.js';
export type { RowContext };
