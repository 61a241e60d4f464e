import { mkdir, rmdir, stat } from 'node:fs/promises';
import { basename, dirname, extname, join, resolve } from 'node:path';
import { StopError, fsReason } from './errors.js';
import type { RecalcResult } from './pipeline.js';
import { commitAll, type WriteJob } from './write/atomic.js';
import { COMMA_DIALECT, writeResultsCsv, type CsvDialect } from './write/csv.js';
import { outputColumns, reportedWithMark } from './write/output-columns.js';
import type { RunInfo } from './write/workbook/index.js';
import { VERSION } from './version.js';
import { htmlReportJobs } from './report/html.js';
import type { TrendSeries } from './history/trends.js';
import type { OnProgress } from './progress.js';

export const OUTPUT_KINDS = ['csv', 'xlsx', 'html'] as const;
export type OutputKind = (typeof OUTPUT_KINDS)[number];

export interface WriteOptions {
  /** Folder for the outputs (created if missing). */
  outDir: string;
  /** Which outputs to write (default all). */
  outputs?: readonly OutputKind[];
  /** Replace existing outputs (default false: an existing output stops the run before anything is written). */
  force?: boolean;
  /**
   * Facts about the run for the Provenance sheet and the report. Default: now, the
   * command "phasebook library call" and this phasebook's version.
   */
  run?: Partial<RunInfo>;
  /** QC history series (history/trends.ts) for the report's control charts and the workbook's Trends sheet. */
  history?: readonly TrendSeries[];
  /** The history file the series came from, as given (the Trends sheet names it). */
  historyFile?: string;
  /** Told how many rows have been written (progress.ts draws it on a terminal). */
  onProgress?: OnProgress;
  /** Told what the commit did besides writing (a stale lock taken over, leftovers of a stopped run). */
  onNotice?: (text: string) => void;
  /** The results CSV's dialect: as the worklist's (default), or comma, semicolon or tab. */
  csvDialect?: CsvDialectChoice;
}

export const CSV_DIALECTS = ['as-input', 'comma', 'semicolon', 'tab'] as const;
export type CsvDialectChoice = (typeof CSV_DIALECTS)[number];

/**
 * The results CSV's dialect. As the input: a CSV worklist's delimiter, decimal mark (as
 * decided for its numbers) and BOM; an XLSX worklist gives comma and decimal point.
 * Chosen: comma with decimal points, semicolon with decimal commas, tab with decimal points.
 */
export function csvDialectOf(result: RecalcResult, choice: CsvDialectChoice = 'as-input'): CsvDialect {
  const bom = result.raw.format.bom ?? false;
  switch (choice) {
    case 'comma':
      return { delimiter: ',', decimal: '.', bom };
    case 'semicolon':
      return { delimiter: ';', decimal: ',', bom };
    case 'tab':
      return { delimiter: '\t', decimal: '.', bom };
    default:
      return result.raw.format.kind === 'csv'
        ? { delimiter: result.raw.format.delimiter ?? ',', decimal: result.table.numberFormat.decimal, bom }
        : COMMA_DIALECT;
  }
}

/** Rows a spreadsheet sheet holds, the header included (Excel's limit, 2^20). */
export const MAX_SHEET_ROWS = 1_048_576;

/**
 * Why the workbook is not written for this many rows, or undefined when it is.
 * A worklist longer than one sheet gets no workbook (its Results would not fit
 * on one sheet, and a Results sheet split over several is no longer one table
 * a reviewer can sort and filter); the results CSV is still written in full.
 */
export function workbookDeclined(rowsOut: number): string | undefined {
  if (rowsOut + 1 <= MAX_SHEET_ROWS) return undefined;
  return (
    `the workbook was not written: the worklist has ${rowsOut.toLocaleString('en-US')} rows and a spreadsheet sheet holds ` +
    `${(MAX_SHEET_ROWS - 1).toLocaleString('en-US')} below its header; the results CSV holds every row`
  );
}

/** Paths of the single-file outputs of a worklist: `<stem>.results.csv`, `<stem>.xlsx` (reports: one per batch). */
export function outputPaths(worklistPath: string, outDir: string): Record<'csv' | 'xlsx', string> {
  const stem = outputStem(worklistPath);
  return { csv: join(outDir, `${stem}.results.csv`), xlsx: join(outDir, `${stem}.xlsx`) };
}

/** Every output is named after the worklist's file name without its extension. */
function outputStem(worklistPath: string): string {
  return basename(worklistPath, extname(worklistPath));
}

/**
 * The real reason a recursive mkdir failed: Node's recursive mkdir reports ENOENT on a
 * read-only file system (and in other cases where a parent exists), which would read as
 * "no such file". Find the nearest folder that exists and create its child plainly.
 */
async function whyMkdirFailed(path: string, err: unknown): Promise<unknown> {
  if ((err as { code?: string }).code !== 'ENOENT') return err;
  let child = resolve(path);
  for (let parent = dirname(child); parent !== child; child = parent, parent = dirname(parent)) {
    try {
      if (!(await stat(parent)).isDirectory()) return err;
    } catch {
      continue; // not there either: go up
    }
    try {
      await mkdir(child);
      await rmdir(child); // it could be made after all: the first error stands
      return err;
    } catch (plain) {
      return plain;
    }
  }
  return err;
}

/** Write the chosen outputs atomically: all of them, or none (DESIGN.md §7). */
export async function writeOutputs(result: RecalcResult, options: WriteOptions): Promise<Record<string, string[]>> {
  const kinds = options.outputs ?? OUTPUT_KINDS;
  const run: RunInfo = {
    timestamp: options.run?.timestamp ?? new Date().toISOString(),
    command: options.run?.command ?? 'phasebook library call (writeOutputs)',
    version: options.run?.version ?? VERSION,
    ...(options.run?.node !== undefined ? { node: options.run.node } : {}),
  };
  try {
    await mkdir(options.outDir, { recursive: true });
  } catch (err) {
    throw new StopError('output', `cannot create the output folder: ${fsReason(await whyMkdirFailed(options.outDir, err))}`, {
      file: options.outDir,
    });
  }
  const paths = outputPaths(result.worklist.path, options.outDir);
  const columns = outputColumns(result);
  const jobs: WriteJob[] = [];
  // Progress: rows written by the output being written, and the part of all outputs done.
  let jobsDone = 0;
  const report = (rows: number, partOfJob: number) =>
    options.onProgress?.({ stage: 'write', rows, totalRows: result.rowsOut, fraction: (jobsDone + partOfJob) / Math.max(1, jobs.length) });
  if (kinds.includes('csv')) {
    const dialect = csvDialectOf(result, options.csvDialect);
    jobs.push({
      target: paths.csv,
      write: (tmp) =>
        writeResultsCsv(
          tmp,
          {
            headers: columns.map((c) => c.header),
            columns: columns.map((c) =>
              c.kind === 'number'
                ? { kind: 'number', values: c.values }
                : { kind: 'text', values: c.role === 'reported_result' ? reportedWithMark(c.values, result.method, dialect.decimal) : c.values },
            ),
            rowCount: result.rowsOut,
          },
          { onRows: options.onProgress && ((rows) => report(rows, rows / Math.max(1, result.rowsOut))), dialect },
        ),
    });
  }
  const workbook = kinds.includes('xlsx') && workbookDeclined(result.rowsOut) === undefined;
  if (workbook) {
    // Loaded only when a workbook is written: exceljs takes a noticeable part of start-up.
    const history = options.history && { file: options.historyFile ?? 'QC history', series: options.history };
    jobs.push({ target: paths.xlsx, write: async (tmp) => (await import('./write/workbook/index.js')).writeWorkbook(tmp, result, { run, history }) });
  }
  const written: Record<string, string[]> = {};
  if (kinds.includes('csv')) written.csv = [paths.csv];
  if (workbook) written.xlsx = [paths.xlsx];
  if (kinds.includes('html')) {
    const html = htmlReportJobs(result, { outDir: options.outDir, stem: outputStem(result.worklist.path), history: options.history, run });
    // In a lane of their own: written while the CSV and the workbook are (see WriteJob.lane).
    jobs.push(...html.map((job) => ({ ...job, lane: 'reports' })));
    written.html = html.map((j) => j.target);
  }
  if (options.onProgress) {
    for (const job of jobs) {
      const write = job.write;
      job.write = async (tmp) => {
        await write(tmp);
        jobsDone++;
        report(result.rowsOut, 0);
      };
    }
  }
  const inputs = [
    { path: result.worklist.path, role: 'the worklist' },
    { path: result.method.file, role: 'the method' },
    ...(options.historyFile ? [{ path: options.historyFile, role: 'the QC history' }] : []),
  ];
  // The reports are one per batch: a report of a batch that is not in this run is an earlier
  // output of this worklist, which --force removes with the rest (it stops the run without).
  const stem = outputStem(result.worklist.path);
  const outputSet = kinds.includes('html')
    ? { folder: options.outDir, belongs: (name: string) => name.startsWith(`${stem}.`) && name.endsWith('.report.html') }
    : undefined;
  await commitAll(jobs, { force: options.force, inputs, outputSet, onNotice: options.onNotice });
  return written;
}
