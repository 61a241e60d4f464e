/**
 * The composition root (STYLE.md habit 1): the only file that knows the order of
 * the stages. read → map columns & units → validate → links → formulas → QC →
 * summary. Writing is the caller's choice (see outputs.ts); recalculate()
 * prints nothing and never exits.
 */
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { basename } from 'node:path';
import { mapColumns, type ColumnMap } from './columns/map.js';
import { buildTable, type WorkTable } from './columns/table.js';
import { findLinks, type Links } from './engine/links.js';
import { compileMethod, evaluateFormulas } from './engine/evaluate.js';
import { parseNumberCell } from './columns/numbers.js';
import { isCanonicalField } from './domain/fields.js';
import { FLAG_CODES, type Flag, type ResultFlag, type ResultNote, type SpreadsheetRow } from './issues.js';
import { loadMethod } from './method/load.js';
import type { OnProgress } from './progress.js';
import type { Method } from './domain/method.js';
import { assessQc, type QcResult } from './qc/assess.js';
import type { InHouseLimits } from './qc/limits.js';
import { readWorklist, withSheetHint } from './read/worklist.js';
import type { RawTable } from './read/types.js';
import { summarize, type GroupSummary, type Verdict } from './summary/summarize.js';
import { RESULT_COLUMN, expandedUncertaintyColumns, uncertaintyTable, type UncertaintyTable } from './qc/uncertainty.js';

export interface RecalcOptions {
  /** Method file path, or a method already loaded. */
  method: string | Method;
  /** XLSX: sheet to read (default the first). */
  sheet?: string;
  /** Refuse worklists larger than this many bytes (default 256 MiB). */
  maxBytes?: number;
  /** Refuse XLSX files that unpack past this many bytes (default 512 MiB). */
  maxUnpackedBytes?: number;
  /** Told how far the run has got (rows read, evaluated); the CLI draws it on a terminal (progress.ts). */
  onProgress?: OnProgress;
  /** In-house recovery limits from the QC history (used when the method's qc.limits is in_house). */
  inHouse?: InHouseLimits;
  /** Expanded uncertainty per analyte from the QC history (qc/uncertainty.ts); a method's fixed U wins. */
  uncertainty?: UncertaintyTable;
}

export interface WorklistInfo {
  path: string;
  name: string;
  bytes: number;
  sha256: string;
}

export interface RecalcResult {
  worklist: WorklistInfo;
  method: Method;
  /**
   * The method's formulas as compiled once (engine/evaluate.ts): what each reads, and its parsed tree, which
   * the workbook translates into spreadsheet formulas. The tree is opaque here so that the public types
   * carry no parser's types.
   */
  compiled: { formulas: ReadonlyArray<{ name: string; dependencies: readonly string[]; node: unknown }> };
  /**
   * How a text cell of this worklist reads as a number (the file's one number format), or undefined when it
   * does not: the workbook stores a CSV's numeric cells as numbers by it, without reading the file again.
   */
  readNumber(text: string): number | undefined;
  /** The worklist verbatim. */
  raw: RawTable;
  columnMap: ColumnMap;
  table: WorkTable;
  links: Links;
  /** Computed columns by name, in the method's order. */
  computed: Map<string, Float64Array>;
  /** Input errors and QC flags, sorted by row; each with its `spreadsheetRow`. */
  flags: ResultFlag[];
  /** Notes for the reviewer, sorted by row; each with its `spreadsheetRow`. */
  notes: ResultNote[];
  /** Per row, the flag codes `;`-joined (each code once, in the order of FLAG_CODES). */
  rowFlags: string[];
  qc: QcResult;
  groups: GroupSummary[];
  verdict: Verdict;
  rowsIn: number;
  rowsOut: number;
  /** The expanded uncertainty of the sample results, when the method or the QC history gives one for an analyte. */
  uncertainty?: ResultsUncertainty;
}

export interface ResultsUncertainty {
  /** The U (percent, k) per analyte and where it comes from. */
  byAnalyte: UncertaintyTable;
  /** Absolute U of each sample result, in the result's unit (NaN where none). */
  expanded: Float64Array;
  /** The coverage factor of each U (NaN where none). */
  k: Float64Array;
  /** The result's unit. */
  unit: string;
}

export async function recalculate(worklistPath: string, options: RecalcOptions): Promise<RecalcResult> {
  const method = typeof options.method === 'string' ? loadMethod(options.method) : options.method;
  compileMethod(method); // a bad formula stops before the worklist is read (kept for the stages after reading)
  const raw = await readWorklist(worklistPath, {
    sheet: options.sheet,
    maxBytes: options.maxBytes,
    maxUnpackedBytes: options.maxUnpackedBytes,
    onRows: options.onProgress && ((rows, fraction) => options.onProgress!({ stage: 'read', rows, fraction })),
  });
  options.onProgress?.({ stage: 'read', rows: raw.rowCount, totalRows: raw.rowCount, fraction: 1 });
  const worklist = await describeFile(worklistPath);
  return recalculateTable(raw, { method, worklist, onProgress: options.onProgress, inHouse: options.inHouse, uncertainty: options.uncertainty });
}

/** The stages after reading, for callers that already hold a RawTable. */
export function recalculateTable(
  raw: RawTable,
  ctx: { method: Method; worklist: WorklistInfo; onProgress?: OnProgress; inHouse?: InHouseLimits; uncertainty?: UncertaintyTable },
): RecalcResult {
  const { method } = ctx;
  // The stages after reading take about equal time; each one done moves "evaluated" on.
  const stageDone = (k: number) => ctx.onProgress?.({ stage: 'evaluate', rows: Math.round((raw.rowCount * k) / 5), totalRows: raw.rowCount });
  const compiled = compileMethod(method); // once per method: recalculate() compiled it already, to fail early
  let columnMap: ColumnMap;
  try {
    columnMap = mapColumns(raw, method);
  } catch (err) {
    throw withSheetHint(err, raw);
  }
  const table = buildTable(raw, columnMap, method);
  stageDone(1);
  const texts = table.texts;
  const links = findLinks({
    rowCount: table.rowCount,
    sampleType: table.sampleType,
    sampleId: texts.get('sample_id')!,
    parentId: texts.get('parent_id')!,
    analyte: texts.get('analyte')!,
    batchId: texts.get('batch_id')!,
  });
  stageDone(2);
  const surrogate = new Float64Array(table.rowCount);
  for (let r = 0; r < table.rowCount; r++) {
    const a = table.analyteIndex[r]!;
    surrogate[r] = a >= 0 && method.analytes[a]!.surrogate ? 1 : 0;
  }
  const numbers = new Map(table.numbers);
  numbers.set('surrogate', surrogate);
  const evaluated = evaluateFormulas(compiled, method.formulas, {
    rowCount: table.rowCount,
    numbers,
    texts,
    parentRow: links.parentRow,
    pairRow: links.pairRow,
    // Rows with an input error, and carried rows (calibrators), are not computed.
    rowError: table.carried.some((x) => x === 1) ? table.rowError.map((e, r) => e | table.carried[r]!) : table.rowError,
  });
  stageDone(3);
  // The U of each sample result comes before QC, which formats the reported result (with "± U" where the method asks).
  const uncertainty = resultsUncertainty(method, { table, computed: evaluated.columns, surrogate, fromHistory: ctx.uncertainty });
  const qc = assessQc({
    method,
    rowCount: table.rowCount,
    rowNumbers: raw.rowNumbers,
    sampleType: table.sampleType,
    analyteIndex: table.analyteIndex,
    texts,
    numbers,
    computed: evaluated.columns,
    links,
    rowError: table.rowError,
    nondetect: table.nondetect,
    nondetectLimit: table.nondetectLimit,
    inHouse: ctx.inHouse,
    expandedUncertainty: uncertainty?.expanded,
    headerOf: (field) => (isCanonicalField(field) ? columnMap.fields.get(field)?.header : undefined),
  });
  stageDone(4);
  const flags = atSpreadsheetRows([...table.errors, ...qc.flags].sort((a, b) => a.row - b.row), raw.rowNumbers);
  const { groups, overall } = summarize({
    rowCount: table.rowCount,
    sampleType: table.sampleType,
    texts,
    computed: evaluated.columns,
    rowError: table.rowError,
    flags,
    qc,
  });
  const notes = atSpreadsheetRows([...table.notes, ...evaluated.notes, ...qc.notes].sort((a, b) => a.row - b.row), raw.rowNumbers);
  stageDone(5);
  return {
    worklist: ctx.worklist,
    method,
    compiled,
    readNumber: (text) => {
      const parsed = parseNumberCell(text, table.numberFormat);
      return parsed.ok && Number.isFinite(parsed.value) ? parsed.value : undefined;
    },
    raw,
    columnMap,
    table,
    links,
    computed: evaluated.columns,
    flags,
    notes,
    rowFlags: joinRowFlags(table.rowCount, flags),
    qc,
    groups,
    verdict: overall,
    rowsIn: raw.rowCount,
    rowsOut: table.rowCount,
    uncertainty,
  };
}

/**
 * Each flag or note with the row a spreadsheet user counts (the reader's row number of its
 * data row); copies, so that the stages' own results stay as those stages made them.
 */
function atSpreadsheetRows<T extends { row: number }>(items: T[], rowNumbers: ArrayLike<number>): Array<T & SpreadsheetRow> {
  return items.map((item) => ({ ...item, spreadsheetRow: rowNumbers[item.row]! }));
}
/** The U of every sample result, when the method or the history gives one for any analyte. */
function resultsUncertainty(
  method: Method,
  p: { table: WorkTable; computed: Map<string, Float64Array>; surrogate: Float64Array; fromHistory?: UncertaintyTable },
): ResultsUncertainty | undefined {
  const byAnalyte = uncertaintyTable(method, p.fromHistory);
  const result = p.computed.get(RESULT_COLUMN);
  if (byAnalyte.size === 0 || !result) return undefined;
  const unit = method.formulas.find((f) => f.name === RESULT_COLUMN)?.unit ?? method.units.concentration;
  const columns = expandedUncertaintyColumns({
    rowCount: p.table.rowCount,
    sampleType: p.table.sampleType,
    analyte: p.table.texts.get('analyte')!,
    surrogate: p.surrogate,
    result,
    table: byAnalyte,
  });
  return { byAnalyte, ...columns, unit };
}


function joinRowFlags(n: number, flags: readonly Flag[]): string[] {
  // Sets only for rows that have a flag: most rows have none.
  const perRow = new Map<number, Set<string>>();
  for (const f of flags) {
    if (!(f.row >= 0 && f.row < n)) continue;
    let codes = perRow.get(f.row);
    if (!codes) perRow.set(f.row, (codes = new Set()));
    codes.add(f.code);
  }
  const out = new Array<string>(n).fill('');
  for (const [row, codes] of perRow) out[row] = FLAG_CODES.filter((c) => codes.has(c)).join(';');
  return out;
}

export async function describeFile(path: string): Promise<WorklistInfo> {
  const hash = createHash('sha256');
  let bytes = 0;
  for await (const chunk of createReadStream(path)) {
    hash.update(chunk as Buffer);
    bytes += (chunk as Buffer).length;
  }
  return { path, name: basename(path), bytes, sha256: hash.digest('hex') };
}
