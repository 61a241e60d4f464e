import ExcelJS from 'exceljs';
import type { RecalcResult } from '../pipeline.js';
import { outputColumns } from './output-columns.js';

/** Facts about the run that only the caller knows. */
export interface RunInfo {
  /** ISO 8601 UTC time of the run (fixed with --timestamp for reproducible files). */
  timestamp: string;
  /** The command line as typed. */
  command: string;
  /** phasebook version. */
  version: string;
}

/**
 * First workbook: a Results sheet with the input columns verbatim and the
 * computed values, header frozen and filters on. Written with exceljs's
 * streaming writer (LIBRARY-NOTES.md §2).
 */
export async function writeWorkbook(path: string, result: RecalcResult, options: { run: RunInfo }): Promise<void> {
  const wb = new ExcelJS.stream.xlsx.WorkbookWriter({ filename: path, useStyles: true, useSharedStrings: false });
  const created = new Date(options.run.timestamp);
  wb.creator = `phasebook ${options.run.version}`;
  wb.lastModifiedBy = wb.creator;
  wb.created = created;
  wb.modified = created;
  const columns = outputColumns(result);
  const ws = wb.addWorksheet('Results', { views: [{ state: 'frozen', ySplit: 1 }] });
  ws.columns = columns.map((c) => ({ header: c.header, width: Math.min(40, Math.max(10, c.header.length + 2)) }));
  ws.autoFilter = { from: { row: 1, column: 1 }, to: { row: 1, column: columns.length } };
  ws.getRow(1).font = { bold: true };
  ws.getRow(1).commit();
  for (let r = 0; r < result.rowsOut; r++) {
    const values = columns.map((c) => {
      const v = c.values[r];
      if (c.kind === 'number') return Number.isFinite(v as number) ? (v as number) : null;
      return v === undefined || v === '' ? null : v;
    });
    ws.addRow(values).commit();
  }
  ws.commit();
  await wb.commit();
}
