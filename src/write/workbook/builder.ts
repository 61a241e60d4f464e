import { cell, type CellValue, type PlannedCell, type PlannedRow, type RowContext, type SheetPlan, type StyleKey } from './cells.js';

type Input = PlannedCell | CellValue | undefined;

const asCell = (x: Input): PlannedCell | undefined =>
  x === undefined ? undefined : x !== null && typeof x === 'object' ? x : cell(x);

/**
 * Builds a small sheet row by row in memory (Summary, QC, Flags, Trends, Method,
 * Provenance): titles, key–value lines and tables with one header row.
 */
export class SheetBuilder {
  readonly rows: PlannedRow[] = [];

  /** 1-based number of the row the next `add` writes. */
  get nextRow(): number {
    return this.rows.length + 1;
  }

  add(cells: readonly Input[], extra: { context?: RowContext; labels?: readonly string[] } = {}): number {
    this.rows.push({ cells: cells.map(asCell), ...extra });
    return this.rows.length;
  }

  blank(): void {
    this.add([]);
  }

  title(text: string, style: StyleKey = 'title'): number {
    return this.add([cell(text, { style })]);
  }

  /** A key in column A and its value in column B; returns the row. */
  keyValue(key: string, value: Input, more: readonly Input[] = []): number {
    return this.add([cell(key, { style: 'label' }), value ?? null, ...more], { labels: [key, key, ...more.map(() => key)] });
  }

  /**
   * A table: header row, then rows. Returns the 1-based header row and the
   * first and last data rows (last < first when there are none).
   */
  table(
    headers: readonly string[],
    rows: readonly (readonly Input[])[],
    options: { contexts?: readonly (RowContext | undefined)[]; headerStyle?: StyleKey } = {},
  ): { headerRow: number; firstRow: number; lastRow: number } {
    const headerRow = this.add(
      headers.map((h) => cell(h, { style: options.headerStyle ?? 'header' })),
      { labels: headers },
    );
    rows.forEach((r, i) => this.add(r, { labels: headers, context: options.contexts?.[i] }));
    return { headerRow, firstRow: headerRow + 1, lastRow: this.rows.length };
  }

  plan(name: string, options: { widths: readonly number[]; frozen?: SheetPlan['frozen']; autoFilter?: SheetPlan['autoFilter'] }): SheetPlan {
    const rows = this.rows;
    return {
      name,
      widths: options.widths,
      frozen: options.frozen,
      autoFilter: options.autoFilter,
      rowCount: rows.length,
      row: (i) => rows[i]!,
    };
  }
}
