import type { RawCell } from './types.js';

/**
 * Column arrays filled as records stream in, cheap in time and memory.
 *
 * - Sized up front from an estimate of the row count (file size over the mean
 *   line length of the file's head) and trimmed at the end: growing large
 *   arrays one push at a time copies them again and again, and each copy of an
 *   array of new strings is work for the garbage collector (the profile of a
 *   200k-row worklist spent most of the reader's own time there).
 * - Repeated cells share one string: a worklist repeats most of its cells (batch,
 *   type, analyte, volumes, pH), so the table keeps a few hundred thousand
 *   strings instead of rows × columns. A column stops being shared once it
 *   has shown MAX_SHARED different values (sample ids, results), where only a
 *   repeat of the cell just above is shared. Strings are immutable, so sharing
 *   changes no value.
 */
export class ColumnBuilder {
  readonly columns: RawCell[][];
  private readonly shared: (Map<string, string> | null)[];
  private readonly previous: (string | null)[];

  constructor(width: number, options: { expectedRows?: number } = {}) {
    const size = Math.max(0, Math.min(MAX_PRESIZED_ROWS, Math.floor(options.expectedRows ?? 0)));
    this.columns = Array.from({ length: width }, () => new Array<RawCell>(size));
    this.shared = Array.from({ length: width }, () => new Map<string, string>());
    this.previous = new Array<string | null>(width).fill(null);
  }

  /** Set cell `column` of data row `row`; rows are filled in order, 0, 1, 2, … */
  set(column: number, row: number, cell: string | null): void {
    this.columns[column]![row] = cell === null ? null : this.share(column, cell);
  }

  /** Set a cell that may be a number (XLSX); a number is kept as it is. */
  setCell(column: number, row: number, cell: RawCell): void {
    if (typeof cell === 'number') this.columns[column]![row] = cell;
    else this.set(column, row, cell);
  }

  /** The columns, cut to `rowCount` rows. */
  finish(rowCount: number): RawCell[][] {
    for (const col of this.columns) col.length = rowCount;
    return this.columns;
  }

  private share(column: number, cell: string): string {
    const prev = this.previous[column];
    if (cell === prev) return prev;
    let out = cell;
    const map = this.shared[column];
    if (map) {
      const seen = map.get(cell);
      if (seen !== undefined) out = seen;
      else if (map.size < MAX_SHARED) map.set(cell, cell);
      else this.shared[column] = null;
    }
    this.previous[column] = out;
    return out;
  }
}

/** Distinct values a column may have and still be shared. */
const MAX_SHARED = 10_000;
/** Rows sized up front at most (beyond, the arrays grow as usual). */
const MAX_PRESIZED_ROWS = 1 << 22;

/**
 * Rows a text file of `fileBytes` bytes probably holds, from its first part
 * (`head`, decoded): the file size over the head's mean line length, plus a
 * little. Exact when the head is the whole file.
 */
export function estimateRows(fileBytes: number, head: string, options: { complete?: boolean } = {}): number {
  let lines = 0;
  for (let i = head.indexOf('\n'); i >= 0; i = head.indexOf('\n', i + 1)) lines++;
  if (options.complete || head.length >= fileBytes) return lines + 1;
  if (lines === 0) return 0;
  const bytesPerLine = Buffer.byteLength(head, 'utf8') / lines;
  return Math.ceil((fileBytes / bytesPerLine) * 1.02) + 16;
}
