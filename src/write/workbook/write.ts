/**
 * Streams a planned workbook to disk with exceljs's WorkbookWriter
 * (LIBRARY-NOTES.md §2): views and column widths are set before the first row,
 * rows are written as soon as they are built, no hyperlinks (they do not mix with
 * other features on a streamed sheet). The streaming writer supports cell notes:
 * it writes them per sheet (comments part and VML drawing) as rows go.
 *
 * Speed. exceljs turns every cell into a model, a style look-up and an XML tree,
 * about 5–10 µs a cell; the Results sheet of a large worklist has millions. So the
 * rows are written here as SpreadsheetML text (`<row><c r=.. s=..>…</c></row>`, the
 * same elements exceljs writes) straight into the sheet's part, while exceljs still
 * writes everything around them (columns, views, filter, notes, styles, the zip).
 * That uses a few members of exceljs 4.4's streaming worksheet that are not public
 * API; when they are missing, each row goes through exceljs's own row writer.
 */
import { once } from 'node:events';
import { createWriteStream } from 'node:fs';
import { PassThrough } from 'node:stream';
import type ExcelJS from 'exceljs';
// The streaming writer and the value types from their own files: the package's entry
// also loads the workbook reader, the CSV parts and their dependencies, about half of
// exceljs's load time, which a run that only writes does not need (exceljs 4.4.0,
// pinned; its package has no exports map, so these paths are public to Node).
import WorkbookWriter from 'exceljs/lib/stream/xlsx/workbook-writer.js';
import enums from 'exceljs/lib/doc/enums.js';
import { columnLetter, escapeForXlsx, sheetText, type CellValue, type PlannedCell, type PlannedRow, type SheetPlan } from './cells.js';
import { ColumnChecks, IntegrityDigest } from './digest.js';
import { printSettings } from './print.js';
import { FIRST_INPUT_COLUMN } from './results-layout.js';
import type { WorkbookPlan } from './workbook-plan.js';
import { styleFor, wrappedRowHeight } from './style.js';
import type { RunInfo } from './options.js';

/** Text that a plain element would not keep (leading/trailing spaces, line breaks) is marked xml:space="preserve". */
const NEEDS_PRESERVE = /^\s|\s$|\n/;

/**
 * One shared style object for unstyled cells: exceljs remembers a style's id by
 * object identity, so a fresh `{}` per cell (its default) would be looked up the
 * slow way every time.
 */
const PLAIN: Partial<ExcelJS.Style> = Object.freeze({}) as Partial<ExcelJS.Style>;

interface NoteBudget {
  left: number;
}

type RowWriter = 'direct' | 'exceljs';

/** The members of exceljs's streaming worksheet the direct row writer uses. */
interface StreamingSheetInternals {
  stream: { write(chunk: string | Buffer): unknown };
  startedData: boolean;
  hasComments: boolean;
  _writeColumns(): void;
  _writeOpenSheetData(): void;
  _sheetCommentsWriter: { addComments(comments: object[]): void };
}

interface StylesInternals {
  addStyleModel(style: object, cellType: number): number;
}

function internalsOf(ws: ExcelJS.Worksheet, wb: ExcelJS.stream.xlsx.WorkbookWriter): { sheet: StreamingSheetInternals; styles: StylesInternals } | undefined {
  const sheet = ws as unknown as Partial<StreamingSheetInternals>;
  const styles = (wb as unknown as { styles?: Partial<StylesInternals> }).styles;
  const ok =
    typeof sheet._writeColumns === 'function' &&
    typeof sheet._writeOpenSheetData === 'function' &&
    typeof sheet._sheetCommentsWriter?.addComments === 'function' &&
    typeof sheet.stream?.write === 'function' &&
    typeof styles?.addStyleModel === 'function';
  return ok ? { sheet: sheet as StreamingSheetInternals, styles: styles as StylesInternals } : undefined;
}

/**
 * Whether this exceljs has the members the direct row writer needs (else every row goes
 * through exceljs's own writer, correct but several times slower). For the test that
 * guards the fast path: an exceljs upgrade that drops them must fail a test, not slow
 * every workbook without a word.
 */
export function directRowWriterAvailable(): boolean {
  const wb = new WorkbookWriter({ stream: new PassThrough(), useStyles: true, useSharedStrings: false });
  const ws = wb.addWorksheet('probe');
  return internalsOf(ws, wb) !== undefined;
}

const escapeText = (s: string): string =>
  /[&<>]/.test(s) ? s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;') : s;

const ESCAPE_LIKE = /_x[0-9A-F]{4}_/;

function inlineString(ref: string, s: string, v: string): string {
  // The plan's text is already storable (cells.ts `cell`); only the XML escapes remain.
  const space = NEEDS_PRESERVE.test(v) ? ' xml:space="preserve"' : '';
  if (ESCAPE_LIKE.test(v)) {
    // Text that looks like an OOXML escape goes in a run (<r><t>), where readers decode
    // escapes, with its "_" escaped, so it reads back as written.
    return `<c r="${ref}"${s} t="inlineStr"><is><r><t${space}>${escapeText(escapeForXlsx(v))}</t></r></is></c>`;
  }
  return `<c r="${ref}"${s} t="inlineStr"><is><t${space}>${escapeText(v)}</t></is></c>`;
}

function cellXml(ref: string, c: PlannedCell, styleId: number): string {
  const s = styleId ? ` s="${styleId}"` : '';
  const v = c.value;
  if (c.formula !== undefined) {
    const f = escapeText(c.formula);
    if (typeof v === 'number') return `<c r="${ref}"${s}><f>${f}</f><v>${v}</v></c>`;
    return `<c r="${ref}"${s} t="str"><f>${f}</f><v>${escapeText(v ?? '')}</v></c>`;
  }
  if (v === null) return s ? `<c r="${ref}"${s}/>` : '';
  if (typeof v === 'number') return `<c r="${ref}"${s}><v>${v}</v></c>`;
  return inlineString(ref, s, v);
}

/** The model exceljs's comments writer takes for a plain-text note (exceljs Note defaults). */
function noteModel(ref: string, text: string): object {
  return {
    type: 'note',
    note: {
      texts: [{ text: sheetText(text) }],
      margins: { insetmode: 'auto', inset: [0.13, 0.13, 0.25, 0.25] },
      protection: { locked: 'True', lockText: 'True' },
      editAs: 'absolute',
    },
    ref,
  };
}

function excelValue(c: PlannedCell): ExcelJS.CellValue {
  if (c.formula !== undefined) return { formula: c.formula, result: (c.value ?? '') as number | string } as ExcelJS.CellFormulaValue;
  const v: CellValue = typeof c.value === 'string' ? sheetText(c.value) : c.value;
  if (typeof v === 'string' && (NEEDS_PRESERVE.test(v) || ESCAPE_LIKE.test(v))) return { richText: [{ text: escapeForXlsx(v) }] };
  return v;
}

/**
 * exceljs's streaming sheet keeps every formula cell it has written in a map, for
 * shared formulas, which we never use; emptying it after each committed row keeps
 * memory flat on large sheets.
 */
function forgetWrittenFormulas(ws: ExcelJS.Worksheet): void {
  const w = ws as unknown as { _formulae?: Record<string, unknown> };
  if (w._formulae !== undefined) w._formulae = {};
}

/** Bytes of a sheet part handed to the zip at a time. */
const CHUNK = 1 << 18;

const yieldToEventLoop = (): Promise<void> => new Promise((resolve) => setImmediate(resolve));

/**
 * Backpressure for a sheet part: exceljs's part stream (StreamBuf) hands data to
 * the zip's compressor without waiting, so a fast writer piles the whole sheet up
 * in memory. Wait until the compressor has taken what was written (its `drain`),
 * and, before the zip has reached this part, until it does. Without those
 * members, just let the event loop run.
 */
async function drained(stream: unknown): Promise<void> {
  const s = stream as { pipes?: NodeJS.WritableStream[]; buffers?: unknown[] };
  if (!Array.isArray(s.pipes)) {
    await yieldToEventLoop();
    return;
  }
  for (let waited = 0; s.pipes.length === 0 && (s.buffers?.length ?? 0) > 64 && waited < 60_000; waited += 5) {
    await new Promise((resolve) => setTimeout(resolve, 5));
  }
  // The zip reads each part through a PassThrough of the readable-stream package (v2), whose state is `_writableState`.
  const dest = s.pipes[0] as (NodeJS.WritableStream & { writableNeedDrain?: boolean; _writableState?: { needDrain?: boolean } }) | undefined;
  if (dest && (dest.writableNeedDrain ?? dest._writableState?.needDrain)) await once(dest, 'drain');
  else await yieldToEventLoop();
}

/** The deepest column outline level of a sheet (0: no outline). */
function outlineOf(plan: SheetPlan): { level: number } {
  let level = 0;
  for (const l of plan.outlineLevels ?? []) level = Math.max(level, l);
  return { level };
}

async function writeSheet(
  wb: ExcelJS.stream.xlsx.WorkbookWriter,
  plan: SheetPlan,
  options: { budget: NoteBudget; rowWriter: RowWriter; title: string; onRow?: (row: PlannedRow, index: number) => void },
): Promise<void> {
  const { budget, onRow } = options;
  const views: Partial<ExcelJS.WorksheetView>[] = plan.frozen
    ? [{ state: 'frozen', ySplit: plan.frozen.rows, xSplit: plan.frozen.columns ?? 0 }]
    : [];
  const outline = outlineOf(plan);
  const ws = wb.addWorksheet(plan.name, {
    views,
    ...printSettings(plan, { title: options.title }),
    ...(outline.level > 0 ? { properties: { outlineLevelCol: outline.level, outlineProperties: { summaryBelow: true, summaryRight: false } } } : {}),
  });
  ws.columns = plan.widths.map((width, i) => {
    const outlineLevel = plan.outlineLevels?.[i] ?? 0;
    return outlineLevel > 0 ? { width, outlineLevel } : { width };
  });
  // exceljs 4.4 marks every column at the sheet's outline level collapsed (Column.collapsed:
  // outlineLevel >= properties.outlineLevelCol), which tells a spreadsheet program the group
  // is folded while its columns show. The sheet's level is already written (sheetFormatPr,
  // when the sheet was added); the value exceljs keeps is raised past every column's level
  // so that the columns are written open.
  if (outline.level > 0) ws.properties.outlineLevelCol = outline.level + 1;
  if (plan.autoFilter) {
    ws.autoFilter = { from: { row: plan.autoFilter.row, column: 1 }, to: { row: plan.autoFilter.row, column: plan.autoFilter.columns } };
  }
  const internals = options.rowWriter === 'direct' ? internalsOf(ws, wb) : undefined;

  if (internals) {
    const { sheet, styles } = internals;
    sheet._writeColumns();
    sheet._writeOpenSheetData();
    sheet.startedData = true;
    const styleIds = new Map<object, number>();
    const styleId = (style: Partial<ExcelJS.Style> | undefined): number => {
      if (!style) return 0;
      let id = styleIds.get(style);
      if (id === undefined) {
        id = styles.addStyleModel(style, enums.ValueType.Number);
        styleIds.set(style, id);
      }
      return id;
    };
    // Rows go into the part as UTF-8 bytes, encoded row by row into a chunk: one long
    // string of many rows would be flattened and encoded by the part stream at once,
    // which costs more than the rows' own building.
    let chunk = Buffer.allocUnsafe(CHUNK);
    let used = 0;
    const flush = async (): Promise<void> => {
      sheet.stream.write(chunk.subarray(0, used));
      chunk = Buffer.allocUnsafe(CHUNK);
      used = 0;
      await drained(sheet.stream);
    };
    const letters: string[] = [];
    for (let i = 0; i < plan.rowCount; i++) {
      const p = plan.row(i);
      onRow?.(p, i);
      const r = i + 1;
      let xml = '';
      let comments: object[] | undefined;
      const cells = p.cells;
      for (let j = 0; j < cells.length; j++) {
        const c = cells[j];
        if (!c) continue;
        const ref = `${(letters[j] ??= columnLetter(j + 1))}${r}`;
        xml += cellXml(ref, c, styleId(styleFor(c.style, c.mark, c.numFmt)));
        if (c.note !== undefined && budget.left > 0) {
          (comments ??= []).push(noteModel(ref, c.note));
          budget.left--;
        }
      }
      if (comments) {
        sheet.hasComments = true;
        sheet._sheetCommentsWriter.addComments(comments);
      }
      if (!xml) continue;
      const height = wrappedRowHeight(cells, plan.widths);
      const text = height === undefined ? `<row r="${r}">${xml}</row>` : `<row r="${r}" ht="${height}" customHeight="1">${xml}</row>`;
      // A UTF-16 unit is at most 3 bytes of UTF-8.
      if (used > 0 && used + text.length * 3 > CHUNK) await flush();
      if (text.length * 3 > CHUNK) {
        sheet.stream.write(Buffer.from(text, 'utf8'));
        await drained(sheet.stream);
      } else {
        used += chunk.write(text, used, 'utf8');
      }
    }
    if (used > 0) sheet.stream.write(chunk.subarray(0, used));
    ws.commit();
    return;
  }

  for (let i = 0; i < plan.rowCount; i++) {
    const p = plan.row(i);
    onRow?.(p, i);
    const row = ws.getRow(i + 1);
    const cells = p.cells;
    for (let j = 0; j < cells.length; j++) {
      const c = cells[j];
      if (!c) continue;
      const xc = row.getCell(j + 1);
      xc.value = excelValue(c);
      xc.style = styleFor(c.style, c.mark, c.numFmt) ?? PLAIN;
      if (c.note !== undefined && budget.left > 0) {
        xc.note = sheetText(c.note);
        budget.left--;
      }
    }
    const height = wrappedRowHeight(cells, plan.widths);
    if (height !== undefined) row.height = height;
    row.commit();
    forgetWrittenFormulas(ws);
    if (i % 2000 === 1999) await yieldToEventLoop();
  }
  ws.commit();
}

/**
 * Write the plan to `path` (a new file: the caller renames it into place).
 * `rowWriter` 'exceljs' sends every row through exceljs's own writer (slower; for
 * tests that compare the two).
 */
export async function writePlannedWorkbook(
  path: string,
  plan: WorkbookPlan,
  options: { run: RunInfo; rowWriter?: RowWriter },
): Promise<void> {
  // The file stream is ours, so that a write error (a full disk) is heard from the first
  // byte on: exceljs listens for errors only once it finalises, and an error before that
  // left the writer waiting for ever, the run's promise unsettled (issue 19).
  const file = createWriteStream(path);
  const failed = new Promise<never>((_, reject) => file.once('error', reject));
  failed.catch(() => undefined); // handled by the race below; this keeps an early error from going unhandled
  const wb = new WorkbookWriter({ stream: file, useStyles: true, useSharedStrings: false });
  const write = async (): Promise<void> => {
    const time = new Date(options.run.timestamp);
    wb.creator = `phasebook ${options.run.version}`;
    wb.lastModifiedBy = wb.creator;
    wb.created = time;
    wb.modified = time;
    const budget: NoteBudget = { left: plan.maxNotes };
    const title = plan.title;
    const rowWriter = options.rowWriter ?? 'direct';
    const digest = new IntegrityDigest();
    const values: CellValue[] = [];
    const formulas: boolean[] = [];
    const columnChecks = new ColumnChecks(plan.results.layout.inputCount, FIRST_INPUT_COLUMN);

    await writeSheet(wb, plan.summary, { budget, rowWriter, title });
    await writeSheet(wb, plan.results.plan, {
      budget,
      rowWriter,
      title,
      onRow: (row) => {
        // One array for every row's values: the digest reads it before the next row.
        values.length = row.cells.length;
        formulas.length = row.cells.length;
        for (let j = 0; j < values.length; j++) {
          values[j] = row.cells[j]?.value ?? null;
          formulas[j] = row.cells[j]?.formula !== undefined;
        }
        digest.addResultsRow(values, { formulas, columnChecks });
      },
    });
    await writeSheet(wb, plan.qc, { budget, rowWriter, title });
    await writeSheet(wb, plan.flags, { budget, rowWriter, title });
    await writeSheet(wb, plan.trends.plan, { budget, rowWriter, title });
    await writeSheet(wb, plan.method, { budget, rowWriter, title });
    digest.addMethod(plan.methodTextSha, plan.limits);
    digest.addTrends(plan.trends.digestRows);
    await writeSheet(wb, plan.provenance(digest.hex(), columnChecks.text()), { budget, rowWriter, title });
    await wb.commit();
  };
  const writing = write();
  writing.catch(() => undefined); // after a write error it may stop half-way: the race below has the outcome
  try {
    await Promise.race([writing, failed]);
  } catch (err) {
    file.destroy();
    throw err;
  }
}
