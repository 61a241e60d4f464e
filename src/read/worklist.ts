/**
 * Pick the reader for a worklist file by its extension, after checking that the
 * content is what the name says (a workbook named .csv, or text named .xlsx, is
 * refused with words that say what the file really is).
 *
 * .csv .txt .tsv → CSV; .xlsx .xlsm → XLSX; any other extension → sniffed
 * (zip signature → XLSX, otherwise CSV, whose reader refuses binary content).
 */
import { otherSheets } from './sheets.js';
import { extname } from 'node:path';
import { StopError } from '../errors.js';
import { checkInputFile, readCsv, readHead, type CsvDelimiter } from './csv.js';
import type { RawTable } from './types.js';

export interface WorklistReadOptions {
  /** XLSX only: sheet to read, by exact name. Default: the first sheet. */
  sheet?: string;
  /** Refuse files larger than this, in bytes. Default 256 MiB. */
  maxBytes?: number;
  /** XLSX only: refuse workbooks that unpack to more than this, in bytes. Default 512 MiB. */
  maxUnpackedBytes?: number;
  /** CSV only: field delimiter. Default: sniffed from the header line. */
  delimiter?: CsvDelimiter;
  /** CSV only: called now and then while reading, with the data rows so far and the part of the file read (0..1). */
  onRows?: (rows: number, fraction: number) => void;
}

const CSV_EXTENSIONS = new Set(['.csv', '.txt', '.tsv']);
const XLSX_EXTENSIONS = new Set(['.xlsx', '.xlsm']);

export type WorklistContent = 'zip' | 'ole' | 'other';

/** What the first bytes say: a zip archive (XLSX), an OLE compound file (legacy .xls), or anything else. */
export function sniffContent(head: Buffer): WorklistContent {
  // "PK\x03\x04" starts a zip with entries, "PK\x05\x06" an empty one.
  if (head.length >= 4 && head[0] === 0x50 && head[1] === 0x4b && (head[2] === 3 || head[2] === 5) && head[3] === head[2] + 1) {
    return 'zip';
  }
  const ole = [0xd0, 0xcf, 0x11, 0xe0, 0xa1, 0xb1, 0x1a, 0xe1];
  if (head.length >= 8 && ole.every((b, i) => head[i] === b)) return 'ole';
  return 'other';
}

/**
 * A stop found in a table read from one sheet of several (a required column
 * missing), with the sheet read and the workbook's sheets added: the first
 * sheet is often a cover or notes sheet.
 */
export function withSheetHint(err: unknown, raw: RawTable): unknown {
  const sheets = raw.format.sheets;
  if (!(err instanceof StopError) || err.kind !== 'input' || sheets === undefined || sheets.length < 2) return err;
  return new StopError(err.kind, `${err.message}; sheet "${raw.format.sheet}" was read${otherSheets(sheets)}`, err.location);
}

export async function readWorklist(path: string, options: WorklistReadOptions = {}): Promise<RawTable> {
  await checkInputFile(path, { maxBytes: options.maxBytes });
  const content = sniffContent((await readHead(path, 8)).bytes);
  const ext = extname(path).toLowerCase();
  const shown = ext === '' ? 'without an extension' : `"${ext}"`;

  if (content === 'ole' || ext === '.xls') {
    throw new StopError(
      'input',
      'is a legacy Excel .xls workbook, which is not read; expected .xlsx or CSV (save it as one of those)',
      { file: path },
    );
  }
  // The XLSX reader (and exceljs) is loaded only for a workbook: it is a noticeable part of start-up.
  const xlsx = async () => (await import('./xlsx.js')).readXlsx(path, { sheet: options.sheet, maxBytes: options.maxBytes, maxUnpackedBytes: options.maxUnpackedBytes });
  const csv = () => readCsv(path, { maxBytes: options.maxBytes, delimiter: options.delimiter, onRows: options.onRows });

  if (XLSX_EXTENSIONS.has(ext)) {
    if (content !== 'zip') {
      throw new StopError(
        'input',
        `is not a readable XLSX workbook: it is named ${shown} but is not a zip archive (if it is CSV text, name it .csv)`,
        { file: path },
      );
    }
    return xlsx();
  }
  if (CSV_EXTENSIONS.has(ext)) {
    if (content === 'zip') {
      throw new StopError(
        'input',
        `does not look like a CSV text file: it is named ${shown} but is a zip archive (if it is an XLSX workbook, name it .xlsx)`,
        { file: path },
      );
    }
    return csv();
  }
  return content === 'zip' ? xlsx() : csv();
}
