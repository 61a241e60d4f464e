/**
 * Results CSV writer: RFC 4180 fields, LF line ends, UTF-8, numbers unrounded,
 * text neutralised against formula injection. The dialect follows the worklist's
 * (issue 13): a semicolon file with decimal commas gives a semicolon file whose
 * computed numbers have decimal commas, with a BOM when the worklist had one, so
 * that a spreadsheet in that locale reads both alike; by default a comma file with
 * decimal points, no BOM.
 *
 * Formula injection (OWASP "CSV Injection"; ASVS 5.0 V1.2.10; LIBRARY-NOTES.md
 * §4): a text cell whose first character is `=` `+` `-` `@`, tab, CR, LF or NUL
 * gets a leading `'` and is quoted. Real numbers come from number columns (or
 * numeric XLSX cells) and are written as numbers, so a computed -2.5 stays -2.5;
 * the same characters held as text ("-2.5" from a CSV cell) are escaped.
 *
 * Fields are encoded straight into 1 MiB buffers that are written in batches
 * (no per-cell stream writes, no long string concatenation).
 */
import { once } from 'node:events';
import { createWriteStream } from 'node:fs';
import { finished } from 'node:stream/promises';
import type { RawCell } from '../read/types.js';

export type ResultColumn =
  | { kind: 'text'; values: ReadonlyArray<RawCell> }
  | { kind: 'number'; values: Float64Array };

/** Delimiter, decimal mark and BOM of the results CSV. */
export interface CsvDialect {
  delimiter: ',' | ';' | '\t';
  decimal: '.' | ',';
  bom: boolean;
}

export const COMMA_DIALECT: CsvDialect = { delimiter: ',', decimal: '.', bom: false };

export interface ResultsCsv {
  headers: readonly string[];
  /** One per header, in order; each holds at least `rowCount` values. */
  columns: readonly ResultColumn[];
  rowCount: number;
}

/** Shortest text that reads back to the same double (JS `String`); NaN and ±Infinity give ''. */
export function formatNumber(x: number): string {
  return Number.isFinite(x) ? String(x) : '';
}

/**
 * A text value as a complete CSV field: neutralised (leading `'`, then quoted)
 * when it starts with a formula trigger, otherwise quoted only when RFC 4180
 * needs it (a comma, quote, CR or LF inside) or when it starts or ends with
 * a space or tab (so that no reader trims it).
 */
export function escapeCsvText(s: string, delimiter: CsvDialect['delimiter'] = ','): string {
  if (s.length === 0) return '';
  const first = s.charCodeAt(0);
  // A number written as text ("-0.02", "+5", "-1,25" in a decimal-comma file) is a
  // real instrument value, not a formula: it stays as written (issue: "-2.5 stays a number").
  if (isFormulaTrigger(first) && !PLAIN_NUMBER.test(s)) return `"'${s.replace(QUOTES, '""')}"`;
  const last = s.charCodeAt(s.length - 1);
  if (NEEDS_QUOTES.test(s) || s.includes(delimiter) || first === 32 || last === 32 || last === 9) return `"${s.replace(QUOTES, '""')}"`;
  return s;
}

const QUOTES = /"/g;
const PLAIN_NUMBER = /^[+-](?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$/;
/** A quote or line break (the delimiter is checked by itself: a comma needs no quotes in a semicolon file). */
const NEEDS_QUOTES = /["\r\n]/;

/** `=` `+` `-` `@` tab CR LF NUL (OWASP CSV Injection plus ASVS's NUL). */
function isFormulaTrigger(c: number): boolean {
  return c === 61 || c === 43 || c === 45 || c === 64 || c === 9 || c === 13 || c === 10 || c === 0;
}

function rawField(v: RawCell | undefined, dialect: CsvDialect): string {
  if (v === null || v === undefined) return '';
  return typeof v === 'number' ? numberField(v, dialect) : escapeCsvText(v, dialect.delimiter);
}

/** A number in the dialect: its decimal point written as the dialect's mark. */
function numberField(x: number, dialect: CsvDialect): string {
  const text = formatNumber(x);
  if (dialect.decimal !== ',' || !text.includes('.')) return text;
  const comma = text.replace('.', ',');
  return dialect.delimiter === ',' ? `"${comma}"` : comma; // a comma file with decimal commas quotes them
}

const CHUNK_BYTES = 1 << 20;
const LF = 10;

/**
 * Copy `s` into `buf` at `off` as UTF-8 and return the new offset. Short ASCII
 * fields (every number, most text) are copied in a JS loop, which is cheaper
 * than a call into Buffer.write; anything else goes through Buffer.write.
 */
function encodeInto(buf: Buffer, off: number, s: string): number {
  const n = s.length;
  if (n > 64) return off + buf.write(s, off);
  for (let i = 0; i < n; i++) {
    const c = s.charCodeAt(i);
    if (c >= 0x80) return off + i + buf.write(s.slice(i), off + i);
    buf[off + i] = c;
  }
  return off + n;
}

/** Write the table to `path` (a new file; use writeFileAtomic around it for the final name). */
export async function writeResultsCsv(
  path: string,
  table: ResultsCsv,
  options: {
    /** Called every few thousand rows with the rows written so far. */
    onRows?: (rows: number) => void;
    /** Delimiter, decimal mark and BOM (default: comma, decimal point, no BOM). */
    dialect?: CsvDialect;
  } = {},
): Promise<void> {
  const onRows = options.onRows;
  const dialect = options.dialect ?? COMMA_DIALECT;
  const SEP = dialect.delimiter.charCodeAt(0);
  const { headers, columns, rowCount } = table;
  if (columns.length !== headers.length) {
    throw new Error(`writeResultsCsv: ${headers.length} headers but ${columns.length} columns`);
  }
  for (let c = 0; c < columns.length; c++) {
    if (columns[c]!.values.length < rowCount) {
      throw new Error(`writeResultsCsv: column "${headers[c]}" has ${columns[c]!.values.length} values, expected ${rowCount}`);
    }
  }

  const out = createWriteStream(path);
  // A filled buffer goes to the stream and comes back to `spare` once written, so
  // a few buffers serve the whole file (fresh memory is slow to touch: the bench
  // profile showed page faults, not copying, as the cost of a new buffer per MiB).
  const spare: Buffer[] = [];
  const take = () => spare.pop() ?? Buffer.allocUnsafe(CHUNK_BYTES);
  let buf = take();
  let off = 0;
  // Hand the filled buffer to the stream and wait for room when the stream asks;
  // an error (now or already) rejects.
  const flush = async () => {
    if (out.errored) throw out.errored;
    const full = buf;
    const ok = out.write(full.subarray(0, off), (err) => {
      if (!err) spare.push(full);
    });
    buf = take();
    off = 0;
    if (!ok) await once(out, 'drain');
  };
  // A field then one separator byte; UTF-8 needs at most 3 bytes per UTF-16 unit.
  const put = async (field: string, separator: number) => {
    if (off + 3 * field.length + 1 > CHUNK_BYTES) {
      await flush();
      if (3 * field.length + 1 > CHUNK_BYTES) {
        out.write(field);
        buf[off++] = separator;
        return;
      }
    }
    off = encodeInto(buf, off, field);
    buf[off++] = separator;
  };

  try {
    if (dialect.bom) off = encodeInto(buf, off, '\uFEFF');
    for (let c = 0; c < headers.length; c++) await put(escapeCsvText(headers[c]!, dialect.delimiter), c === headers.length - 1 ? LF : SEP);
    const last = columns.length - 1;
    for (let r = 0; r < rowCount; r++) {
      if (onRows && (r & 8191) === 0 && r > 0) onRows(r);
      for (let c = 0; c <= last; c++) {
        const col = columns[c]!;
        const field = col.kind === 'number' ? numberField(col.values[r]!, dialect) : rawField(col.values[r], dialect);
        const separator = c === last ? LF : SEP;
        // Inline fast path of put(): no promise unless the buffer is full.
        if (off + 3 * field.length + 1 <= CHUNK_BYTES) {
          off = encodeInto(buf, off, field);
          buf[off++] = separator;
        } else {
          await put(field, separator);
        }
      }
    }
    if (off > 0) out.write(buf.subarray(0, off));
    out.end();
  } catch (err) {
    out.destroy();
    throw err;
  }
  await finished(out);
}
