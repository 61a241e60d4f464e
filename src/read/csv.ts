/**
 * CSV worklist reader: the file as written, column by column (RawTable).
 *
 * - Streams the file (papaparse `step` over a read stream) straight into column
 *   arrays; every cell stays the verbatim string, spaces included.
 * - Delimiter: the `delimiter` option, else a sniff of the header line (the most
 *   frequent of `,` `;` tab outside quotes; a tie or none gives `,`). A `;` file
 *   is taken to use a decimal comma (`format.decimalComma`).
 * - Row numbers are what a spreadsheet shows when it opens the file: every record
 *   is one row (a quoted cell's line breaks stay inside its row) and a blank line
 *   is an empty row, so it still counts. Blank records (every cell empty or only
 *   spaces, papaparse's "greedy" sense) carry no data and are skipped.
 * - Line numbers in stop messages are text lines as an editor counts them.
 * - The whole file must be UTF-8 text without NUL bytes: a bad byte anywhere
 *   stops the run (never a silent U+FFFD). Line ends are read as one kind: CRLF,
 *   lone CR and LF all end a record, even mixed in one file (a file edited on two
 *   systems), so no row is glued to the next; a line break inside a quoted cell
 *   is kept as LF.
 */
import { createReadStream } from 'node:fs';
import { open, stat } from 'node:fs/promises';
import { Transform } from 'node:stream';
import Papa from 'papaparse';
import { StopError, fsReason } from '../errors.js';
import { rowMessage } from '../issues.js';
import { ColumnBuilder, estimateRows } from './column-builder.js';
import type { RawTable, RowProblem } from './types.js';
import { formatBytes } from '../format.js';

export type CsvDelimiter = ',' | ';' | '\t';

export interface CsvReadOptions {
  /** Refuse files larger than this, in bytes, before reading. Default 256 MiB. */
  maxBytes?: number;
  /** Field delimiter; default: sniffed from the header line. */
  delimiter?: CsvDelimiter;
  /** Called now and then while reading: data rows so far and the part of the file read (0..1). */
  onRows?: (rows: number, fraction: number) => void;
}

/** How much of the start of the file is checked for binary content. */
const HEAD_BYTES = 64 * 1024;
export const DEFAULT_MAX_BYTES = 256 * 1024 * 1024;
/** Longest record accepted, in characters (a worklist row is a few hundred). */
const MAX_RECORD_CHARS = 1024 * 1024;
/** Rows between two progress reports. */
const REPORT_EVERY_ROWS = 8192;

export async function readCsv(path: string, options: CsvReadOptions = {}): Promise<RawTable> {
  const size = await checkInputFile(path, { maxBytes: options.maxBytes });
  const head = await readHead(path, HEAD_BYTES);
  const text = checkTextHead(path, head.bytes, head.complete);
  if (text.trim() === '') throw new StopError('input', 'is empty, expected a header row and data rows', { file: path });
  const delimiter = options.delimiter ?? sniffDelimiter(text);
  const bom = head.bytes.length >= 3 && head.bytes[0] === 0xef && head.bytes[1] === 0xbb && head.bytes[2] === 0xbf;
  const table = await parseStream(path, delimiter, { expectedRows: estimateRows(size, text, { complete: head.complete }), fileBytes: size, onRows: options.onRows });
  table.format.bom = bom;
  return table;
}

/**
 * Stat checks shared by the readers: the file exists, is a file, is not larger
 * than `maxBytes` (checked before any reading) and is not empty.
 */
export async function checkInputFile(path: string, options: { maxBytes?: number } = {}): Promise<number> {
  const maxBytes = options.maxBytes ?? DEFAULT_MAX_BYTES;
  let size: number;
  try {
    const st = await stat(path);
    if (st.isDirectory()) throw new StopError('input', 'is a folder, expected a worklist file', { file: path });
    size = st.size;
  } catch (err) {
    if (err instanceof StopError) throw err;
    throw new StopError('input', `cannot be read: ${fsReason(err)}`, { file: path });
  }
  if (size > maxBytes) {
    throw new StopError('input', `is ${formatBytes(size)}, larger than the ${formatBytes(maxBytes)} accepted`, { file: path });
  }
  if (size === 0) throw new StopError('input', 'is empty, expected a header row and data rows', { file: path });
  return size;
}

/** The first `limit` bytes of a file, and whether that is the whole file. */
export async function readHead(path: string, limit: number): Promise<{ bytes: Buffer; complete: boolean }> {
  let fh;
  try {
    fh = await open(path, 'r');
  } catch (err) {
    throw new StopError('input', `cannot be read: ${fsReason(err)}`, { file: path });
  }
  try {
    const buf = Buffer.alloc(limit + 1);
    let got = 0;
    while (got < buf.length) {
      const { bytesRead } = await fh.read(buf, got, buf.length - got, got);
      if (bytesRead === 0) break;
      got += bytesRead;
    }
    return { bytes: buf.subarray(0, Math.min(got, limit)), complete: got <= limit };
  } catch (err) {
    throw new StopError('input', `cannot be read: ${fsReason(err)}`, { file: path });
  } finally {
    await fh.close();
  }
}

/**
 * Refuse a head that is not UTF-8 text (NUL bytes, invalid UTF-8, UTF-16) and
 * return it decoded, without a BOM. `complete` says the head is the whole file
 * (otherwise a multi-byte character cut at the end is not an error).
 */
export function checkTextHead(path: string, head: Buffer, complete: boolean): string {
  const notText = (why: string, line?: number) =>
    new StopError('input', `does not look like a CSV text file: ${why}`, line === undefined ? { file: path } : { file: path, line, lineKind: 'line' });
  if (head.length >= 2 && ((head[0] === 0xff && head[1] === 0xfe) || (head[0] === 0xfe && head[1] === 0xff))) {
    throw notText('it is UTF-16 text; save it as UTF-8 CSV');
  }
  const nul = head.indexOf(0);
  if (nul >= 0) throw notText(`it holds binary data (a NUL byte at byte ${nul + 1})`, lineAt(head, nul));
  const bad = firstInvalidUtf8(head, complete);
  if (bad >= 0) {
    throw notText(
      `invalid UTF-8 at byte ${bad + 1} (0x${head[bad]!.toString(16).toUpperCase().padStart(2, '0')}); save it as UTF-8 CSV`,
      lineAt(head, bad),
    );
  }
  let text = head.toString('utf8');
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  return text;
}

/** Pick the delimiter from the header line: most frequent of `,` `;` tab outside quotes. */
export function sniffDelimiter(text: string): CsvDelimiter {
  text = text.replace(/^(?:[ \t]*\r?\n)+/, ''); // blank lines before the header
  let comma = 0;
  let semi = 0;
  let tab = 0;
  let inQuotes = false;
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (c === '"') inQuotes = !inQuotes; // a doubled quote toggles twice: no net change
    else if (inQuotes) continue;
    else if (c === '\n' || c === '\r') break;
    else if (c === ',') comma++;
    else if (c === ';') semi++;
    else if (c === '\t') tab++;
  }
  if (semi > comma && semi >= tab) return ';';
  if (tab > comma && tab > semi) return '\t';
  return ',';
}

interface ParseState {
  headers: string[] | null;
  /** Spreadsheet row of the header record. */
  headerRow: number;
  /** Created at the header, sized for the rows the file probably holds. */
  columns: ColumnBuilder | null;
  expectedRows: number;
  rowNumbers: number[];
  rowProblems: RowProblem[];
  /** Spreadsheet row of the record being read (1-based, blank records counted). */
  record: number;
  /** Text line the next record starts on (1-based). */
  nextLine: number;
  stop: StopError | null;
}

function parseStream(
  path: string,
  delimiter: CsvDelimiter,
  options: { expectedRows?: number; fileBytes?: number; onRows?: CsvReadOptions['onRows'] } = {},
): Promise<RawTable> {
  const st: ParseState = {
    headers: null,
    headerRow: 1,
    columns: null,
    expectedRows: options.expectedRows ?? 0,
    rowNumbers: [],
    rowProblems: [],
    record: 0,
    nextLine: 1,
    stop: null,
  };

  return new Promise<RawTable>((resolve, reject) => {
    const file = createReadStream(path);
    const text = new TextChecker();
    const stream = file.pipe(text);
    let failed = false;
    const fail = (err: StopError) => {
      if (failed) return;
      failed = true;
      file.destroy();
      stream.destroy();
      reject(err);
    };
    file.on('error', (err) => fail(new StopError('input', `cannot be read: ${fsReason(err)}`, { file: path })));
    // A bad byte found while streaming: say where, with the text line counted from the file.
    const failOnText = () => {
      const p = text.problem!;
      const stop = (line?: number) =>
        fail(new StopError('input', `does not look like a CSV text file: ${p.why}`, line === undefined ? { file: path } : { file: path, line, lineKind: 'line' }));
      lineOfByte(path, p.offset).then(stop, () => stop());
    };

    // papaparse re-reads an unfinished record with every new chunk, so an
    // unclosed quote early in a large file would cost time quadratic in its size.
    // A record still open after MAX_RECORD_CHARS is refused right away.
    let charsRead = 0;
    let recordEnd = 0;
    let reported = 0;
    // The text read since the last finished record (at most about MAX_RECORD_CHARS), to tell an
    // open quote from a record that is simply that long.
    const pending: string[] = [];
    let pendingStart = 0;
    stream.on('data', (chunk: string | Buffer) => {
      const text = String(chunk);
      charsRead += text.length;
      pending.push(text);
      while (pending.length > 1 && pendingStart + pending[0]!.length <= recordEnd) pendingStart += pending.shift()!.length;
      if (!failed && charsRead - recordEnd > MAX_RECORD_CHARS + text.length) {
        const open = pending.join('').slice(Math.max(0, recordEnd - pendingStart));
        fail(
          new StopError(
            'input',
            open.includes('"')
              ? `a quoted cell that starts on line ${st.nextLine} runs on for more than 1 MiB without a closing "; expected a closing " (a quote is probably missing)`
              : `the row that starts on line ${st.nextLine} runs on for more than 1 MiB without ending; expected rows of a worklist (a cell that long is not one)`,
            { file: path, line: st.nextLine, lineKind: 'line' },
          ),
        );
      }
    });

    Papa.parse<string[]>(stream, {
      delimiter,
      newline: '\n', // TextChecker turned every CRLF and lone CR into LF
      dynamicTyping: false,
      // Blank records are skipped below instead, so that they still count as rows.
      skipEmptyLines: false,
      step(results, parser) {
        recordEnd = results.meta.cursor;
        if (st.stop) return;
        takeRecord(path, st, results.data, results.errors);
        if (st.stop) parser.abort();
        else if (options.onRows && st.rowNumbers.length - reported >= REPORT_EVERY_ROWS) {
          reported = st.rowNumbers.length;
          options.onRows(reported, options.fileBytes ? Math.min(1, file.bytesRead / options.fileBytes) : 0);
        }
      },
      complete() {
        if (text.problem) return failOnText();
        if (st.stop) return fail(st.stop);
        try {
          resolve(finish(path, st, delimiter));
        } catch (err) {
          fail(err as StopError);
        }
      },
      error(err: Error) {
        if (text.problem) return failOnText();
        fail(new StopError('input', `cannot be read: ${err.message}`, { file: path }));
      },
    });
  });
}

function takeRecord(path: string, st: ParseState, cells: string[], errors: Papa.ParseError[]): void {
  st.record++;
  const line = st.nextLine;
  let breaks = 0;
  for (const cell of cells) breaks += countLineBreaks(cell);
  st.nextLine += 1 + breaks;

  const quoteError = errors.find((e) => e.type === 'Quotes');
  if (quoteError) {
    // The damaged cell is the last one papaparse returned (it runs to the end of the file).
    let openLine = line;
    for (let i = 0; i < cells.length - 1; i++) openLine += countLineBreaks(cells[i]!);
    const invalid = errors.some((e) => e.code === 'InvalidQuotes');
    st.stop = new StopError(
      'input',
      invalid
        ? `a quoted cell on line ${openLine} has text after its closing quote; expected the delimiter or the end of the line right after a closing "`
        : `a quoted cell that starts on line ${openLine} is never closed; expected a closing " before the end of the file`,
      { file: path, line: openLine, lineKind: 'line' },
    );
    return;
  }

  if (isBlank(cells)) return;

  if (st.headers === null) {
    const headers = cells.slice();
    if (headers[0]!.charCodeAt(0) === 0xfeff) headers[0] = headers[0]!.slice(1);
    const seen = new Map<string, number>();
    for (let c = 0; c < headers.length; c++) {
      const key = headers[c]!.trim();
      if (key === '') continue; // unnamed columns are left to column mapping
      if (seen.has(key)) {
        st.stop = new StopError(
          'input',
          `the header "${key}" appears twice (columns ${seen.get(key)! + 1} and ${c + 1}); expected each header once`,
          { file: path, line: st.record, column: key },
        );
        return;
      }
      seen.set(key, c);
    }
    st.headers = headers;
    st.headerRow = st.record;
    st.columns = new ColumnBuilder(headers.length, { expectedRows: st.expectedRows });
    return;
  }

  const width = st.headers.length;
  const dataRow = st.rowNumbers.length;
  st.rowNumbers.push(st.record);
  for (let c = 0; c < width; c++) st.columns!.set(c, dataRow, c < cells.length ? cells[c]! : null);
  if (cells.length < width) {
    st.rowProblems.push({
      row: dataRow,
      message: rowMessage(st.record, undefined, `expected ${width} cells, got ${cells.length}`),
    });
  } else if (cells.length > width) {
    // Extra empty cells (a trailing delimiter) lose nothing; extra values are reported.
    const extra = cells.slice(width).filter((v) => v.trim() !== '');
    if (extra.length > 0) {
      // Every extra value is named: the message is the only place they survive.
      const shown = extra.map((v) => `"${v}"`).join(', ');
      st.rowProblems.push({
        row: dataRow,
        message: rowMessage(st.record, undefined, `expected ${width} cells, got ${cells.length}; extra values ${shown} were dropped`),
      });
    }
  }
}

function finish(path: string, st: ParseState, delimiter: CsvDelimiter): RawTable {
  if (st.headers === null) throw new StopError('input', 'is empty, expected a header row and data rows', { file: path });
  if (st.rowNumbers.length === 0) {
    throw new StopError('input', 'has a header row but no data rows, expected at least one row of data below the header', { file: path });
  }
  return {
    source: path,
    headers: st.headers,
    headerRow: st.headerRow,
    columns: st.columns!.finish(st.rowNumbers.length),
    rowCount: st.rowNumbers.length,
    rowNumbers: Int32Array.from(st.rowNumbers),
    rowProblems: st.rowProblems,
    format: { kind: 'csv', delimiter, decimalComma: delimiter === ';' },
  };
}

function isBlank(cells: string[]): boolean {
  for (const cell of cells) if (cell.trim() !== '') return false;
  return true;
}

/** Line breaks inside a cell as an editor counts them (CRLF once, lone CR or LF once each). */
function countLineBreaks(s: string): number {
  let n = 0;
  for (let i = s.indexOf('\n'); i >= 0; i = s.indexOf('\n', i + 1)) n++;
  if (s.includes('\r')) {
    for (let i = 0; i < s.length; i++) if (s.charCodeAt(i) === 13 && s.charCodeAt(i + 1) !== 10) n++;
  }
  return n;
}

/** 1-based text line of a byte offset. */
function lineAt(buf: Buffer, offset: number): number {
  let line = 1;
  for (let i = buf.indexOf(10); i >= 0 && i < offset; i = buf.indexOf(10, i + 1)) line++;
  return line;
}

/**
 * Offset of the first byte that breaks UTF-8 (RFC 3629: no overlongs, no
 * surrogates, nothing above U+10FFFF), or -1. A sequence cut by the end of the
 * buffer is an error only when the buffer is the whole file.
 */
export function firstInvalidUtf8(buf: Buffer, complete: boolean): number {
  let i = 0;
  const n = buf.length;
  while (i < n) {
    const b = buf[i]!;
    if (b < 0x80) {
      i++;
      continue;
    }
    let need: number;
    let lo = 0x80;
    let hi = 0xbf;
    if (b >= 0xc2 && b <= 0xdf) need = 1;
    else if (b >= 0xe0 && b <= 0xef) {
      need = 2;
      if (b === 0xe0) lo = 0xa0;
      if (b === 0xed) hi = 0x9f;
    } else if (b >= 0xf0 && b <= 0xf4) {
      need = 3;
      if (b === 0xf0) lo = 0x90;
      if (b === 0xf4) hi = 0x8f;
    } else return i;
    for (let k = 1; k <= need; k++) {
      if (i + k >= n) return complete ? i : -1;
      const c = buf[i + k]!;
      if (k === 1 ? c < lo || c > hi : c < 0x80 || c > 0xbf) return i;
    }
    i += need + 1;
  }
  return -1;
}

/**
 * Bytes in, text out (one string per chunk): refuses a NUL byte or invalid
 * UTF-8 anywhere in the file (the head check sees only the first 64 KiB), and
 * turns CRLF and lone CR into LF. On a problem it stops with `problem` set and
 * an error, which the parser's error callback reports.
 */
class TextChecker extends Transform {
  problem: { offset: number; why: string } | null = null;
  private readonly decoder = new TextDecoder('utf-8', { fatal: true });
  private offset = 0;
  private previous: Buffer = Buffer.alloc(0);
  private pendingCr = false;

  constructor() {
    super({ readableObjectMode: true });
  }

  override _transform(chunk: Buffer, _encoding: BufferEncoding, callback: (err?: Error | null) => void): void {
    const nul = chunk.indexOf(0);
    if (nul >= 0) return callback(this.refuse(this.offset + nul, `it holds binary data (a NUL byte at byte ${this.offset + nul + 1})`));
    let text: string;
    try {
      text = this.decoder.decode(chunk, { stream: true });
    } catch {
      // Find the byte: the incomplete sequence the previous chunk ended with, then this chunk.
      const tail = incompleteTail(this.previous);
      const joined = Buffer.concat([this.previous.subarray(this.previous.length - tail), chunk]);
      const at = Math.max(0, firstInvalidUtf8(joined, false));
      return callback(this.refuse(this.offset - tail + at, invalidUtf8(this.offset - tail + at, joined[at])));
    }
    this.offset += chunk.length;
    this.previous = chunk;
    this.pushText(text, false);
    callback();
  }

  override _flush(callback: (err?: Error | null) => void): void {
    let text: string;
    try {
      text = this.decoder.decode();
    } catch {
      const at = this.offset - incompleteTail(this.previous);
      return callback(this.refuse(at, invalidUtf8(at, this.previous[this.previous.length - (this.offset - at)])));
    }
    this.pushText(text, true);
    callback();
  }

  private pushText(text: string, last: boolean): void {
    if (this.pendingCr) text = '\r' + text;
    this.pendingCr = !last && text.endsWith('\r'); // its LF may start the next chunk
    if (this.pendingCr) text = text.slice(0, -1);
    if (text.includes('\r')) text = text.replace(/\r\n?/g, '\n');
    if (text !== '') this.push(text);
  }

  private refuse(offset: number, why: string): Error {
    this.problem = { offset, why };
    return new Error(why);
  }
}

function invalidUtf8(offset: number, byte: number | undefined): string {
  const hex = byte === undefined ? '' : ` (0x${byte.toString(16).toUpperCase().padStart(2, '0')})`;
  return `invalid UTF-8 at byte ${offset + 1}${hex}; save it as UTF-8 CSV`;
}

/** How many bytes at the end of `buf` start a UTF-8 sequence that is not finished (0–3). */
function incompleteTail(buf: Buffer): number {
  for (let k = 1; k <= Math.min(3, buf.length); k++) {
    const b = buf[buf.length - k]!;
    if ((b & 0xc0) === 0x80) continue; // a continuation byte: look further back
    if (b < 0xc0) return 0;
    const need = b >= 0xf0 ? 4 : b >= 0xe0 ? 3 : 2;
    return need > k ? k : 0;
  }
  return 0;
}

/** 1-based text line of byte `offset` of a file (LF-counted; only read when reporting a problem). */
async function lineOfByte(path: string, offset: number): Promise<number> {
  let line = 1;
  if (offset <= 0) return line;
  for await (const chunk of createReadStream(path, { start: 0, end: offset - 1 })) {
    const buf = chunk as Buffer;
    for (let i = buf.indexOf(10); i >= 0; i = buf.indexOf(10, i + 1)) line++;
  }
  return line;
}
