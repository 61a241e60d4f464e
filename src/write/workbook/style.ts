/**
 * Our own plain colour scheme for the reviewer's workbook (nothing borrowed from
 * any lab product): pale fills that keep black text readable and print well.
 *
 * - light red: fails (a failing QC flag, an input error, qc_status fail)
 * - light amber: informs (a flag that does not fail the row)
 * - light blue: a note (something the engine noted, a value with no spreadsheet formula)
 * - header fills tell the column blocks of the Results sheet apart: grey for the
 *   worklist's own columns, pale green for values as used, pale violet for computed.
 *
 * exceljs caches a style by object identity (a WeakMap in its styles writer), so
 * every distinct style is built once here and shared by all the cells that use it.
 */
import type ExcelJS from 'exceljs';
import type { Mark, StyleKey } from './cells.js';

export const COLOURS = {
  fail: 'FFF6CDCD',
  inform: 'FFFBE5B6',
  note: 'FFD7E7F7',
  headerInput: 'FFE3E3E3',
  headerAsUsed: 'FFE1EEDB',
  headerComputed: 'FFE7E1F3',
  headerStatus: 'FFEDEDED',
  section: 'FFF2F2F2',
} as const;

/** What each mark means, for the legend on the Summary sheet. */
export const MARK_MEANINGS: Record<Mark, string> = {
  fail: 'fails: a failing QC flag (REC_LOW, REC_HIGH, RPD_HIGH, BLANK_HIT, NO_PARENT), an input error, qc_status fail, or on the Trends sheet a Westgard rejection rule broken',
  inform: 'informs: a flag that does not fail the row (BELOW_RL, OVER_RANGE, OUTLIER, LCS_ASSOC, MATRIX_ASSOC, BLANK_ASSOC), or on the Trends sheet the 1-2s warning rule',
  note: 'a note: something the engine noted (no partition coefficient, a division by zero) or a value written without a spreadsheet formula',
};

const fill = (argb: string): ExcelJS.Fill => ({ type: 'pattern', pattern: 'solid', fgColor: { argb } });

const BASE: Record<StyleKey, Partial<ExcelJS.Style>> = {
  title: { font: { bold: true, size: 14 } },
  section: { font: { bold: true, size: 12 }, fill: fill(COLOURS.section) },
  label: { font: { bold: true } },
  header: { font: { bold: true }, fill: fill(COLOURS.headerStatus), alignment: { wrapText: true, vertical: 'top' } },
  'header-input': { font: { bold: true }, fill: fill(COLOURS.headerInput), alignment: { wrapText: true, vertical: 'top' } },
  'header-as-used': { font: { bold: true }, fill: fill(COLOURS.headerAsUsed), alignment: { wrapText: true, vertical: 'top' } },
  'header-computed': { font: { bold: true }, fill: fill(COLOURS.headerComputed), alignment: { wrapText: true, vertical: 'top' } },
  'header-status': { font: { bold: true }, fill: fill(COLOURS.headerStatus), alignment: { wrapText: true, vertical: 'top' } },
  wrap: { alignment: { wrapText: true, vertical: 'top' } },
  'sign-off': { border: { bottom: { style: 'thin' } } },
};

const MARK_FILL: Record<Mark, ExcelJS.Fill> = {
  fail: fill(COLOURS.fail),
  inform: fill(COLOURS.inform),
  note: fill(COLOURS.note),
};

/** A swatch style for the legend. */
export const markFill = (mark: Mark): ExcelJS.Fill => MARK_FILL[mark];

/** Styles by key, then mark, then number format: looked up for every cell, so no key text is built. */
const cache = new Map<StyleKey | undefined, Map<Mark | undefined, Map<string | undefined, Partial<ExcelJS.Style>>>>();

/** The shared exceljs style for a combination, or undefined for a plain cell. */
export function styleFor(key: StyleKey | undefined, mark: Mark | undefined, numFmt: string | undefined): Partial<ExcelJS.Style> | undefined {
  if (key === undefined && mark === undefined && numFmt === undefined) return undefined;
  let byMark = cache.get(key);
  if (!byMark) cache.set(key, (byMark = new Map()));
  let byFormat = byMark.get(mark);
  if (!byFormat) byMark.set(mark, (byFormat = new Map()));
  let style = byFormat.get(numFmt);
  if (!style) {
    style = { ...(key ? BASE[key] : {}) };
    if (mark) style.fill = MARK_FILL[mark];
    if (numFmt) style.numFmt = numFmt;
    byFormat.set(numFmt, style);
  }
  return style;
}

/** The stronger of two marks (fail > inform > note). */
export function strongerMark(a: Mark | undefined, b: Mark | undefined): Mark | undefined {
  const rank = (m: Mark | undefined) => (m === 'fail' ? 3 : m === 'inform' ? 2 : m === 'note' ? 1 : 0);
  return rank(a) >= rank(b) ? a : b;
}

/**
 * A display format for a numeric column: about four significant figures at the
 * column's typical (median) size, one decimal for percentages, scientific for
 * very small or very large values. Display only: stored values stay exact.
 */
export function displayFormat(values: ArrayLike<number>, options: { percent?: boolean } = {}): string {
  if (options.percent) return '0.0';
  const xs: number[] = [];
  const step = Math.max(1, Math.floor(values.length / 2000));
  for (let i = 0; i < values.length; i += step) {
    const v = values[i]!;
    if (Number.isFinite(v) && v !== 0) xs.push(Math.abs(v));
  }
  if (xs.length === 0) return 'General';
  xs.sort((a, b) => a - b);
  const median = xs[Math.floor(xs.length / 2)]!;
  if (median < 1e-4 || median >= 1e7) return '0.000E+00';
  const decimals = Math.min(6, Math.max(0, 3 - Math.floor(Math.log10(median))));
  return decimals === 0 ? '0' : `0.${'0'.repeat(decimals)}`;
}

const FIXED_FORMATS = Array.from({ length: 16 }, (_, d) => (d === 0 ? '0' : `0.${'0'.repeat(d)}`));

/**
 * The display format that shows x with `sig` significant figures (issue 14): 0.00461
 * as 0.00461, 6.19 as 6.19, 152.656853 as 153, 15234 as 15234 (a format cannot round
 * left of the point); scientific below 1e-4 and from 1e9. Display only: the stored
 * value stays exact, and reported_result holds the rounded text.
 */
export function significantFormat(x: number, sig: number): string {
  if (!Number.isFinite(x) || x === 0) return 'General';
  const rounded = Math.abs(Number(x.toPrecision(sig))); // 9.996 at 3 figures is 10.0: its own power of ten
  const e = Math.floor(Math.log10(rounded) + 1e-12);
  if (e < -4 || e >= 9) return sig === 1 ? '0E+00' : `0.${'0'.repeat(sig - 1)}E+00`;
  return FIXED_FORMATS[Math.min(15, Math.max(0, sig - 1 - e))]!;
}

/** Whether a style wraps its text within the column (the headers and 'wrap'). */
export function wrapsText(key: StyleKey | undefined): boolean {
  return key !== undefined && BASE[key].alignment?.wrapText === true;
}

/** Points a line of the default font (11 pt) takes: a spreadsheet's default row height (15 pt; from memory). */
export const LINE_HEIGHT = 15;

/** The tallest row a spreadsheet program keeps, in points (Excel's specifications and limits: 409; from memory). */
export const MAX_ROW_HEIGHT = 409;

/**
 * The lines a text takes when wrapped in a column `width` characters wide, broken between words as a
 * spreadsheet program breaks it (a word longer than a line takes several). A column's width counts the
 * digit "0" of the default font, and most text runs about as wide or narrower; a line is taken to hold
 * nine tenths of the width, so that the estimate errs towards a row taller than needed, never shorter.
 */
export function wrappedLines(text: string, width: number): number {
  const perLine = Math.max(1, Math.floor(width * 0.9));
  let lines = 0;
  for (const paragraph of text.split('\n')) {
    let used = 0;
    let count = 1;
    for (const word of paragraph.split(' ')) {
      const w = word.length;
      if (used > 0 && used + 1 + w <= perLine) {
        used += 1 + w;
        continue;
      }
      if (used > 0) count++;
      // A word longer than a line fills lines of its own; what remains starts the next.
      count += Math.floor(Math.max(0, w - 1) / perLine);
      used = w - Math.floor(Math.max(0, w - 1) / perLine) * perLine;
    }
    lines += count;
  }
  return lines;
}

/**
 * The height (points) a row needs so that its wrapped cells show every line, and so that no wrapped
 * text runs over the row below; undefined when every wrapped cell fits on one line (the default height).
 */
export function wrappedRowHeight(cells: readonly ({ value: unknown; style?: StyleKey } | undefined)[], widths: readonly number[]): number | undefined {
  let lines = 1;
  for (let j = 0; j < cells.length; j++) {
    const c = cells[j];
    if (c === undefined || !wrapsText(c.style) || typeof c.value !== 'string') continue;
    lines = Math.max(lines, wrappedLines(c.value, widths[j] ?? 8.43));
  }
  return lines > 1 ? Math.min(MAX_ROW_HEIGHT, lines * LINE_HEIGHT) : undefined;
}

/** A width (characters) that fits the longest of the texts, within limits. */
export function fitWidth(texts: Iterable<string>, options: { min?: number; max?: number } = {}): number {
  const min = options.min ?? 8;
  const max = options.max ?? 50;
  let longest = 0;
  for (const t of texts) {
    for (const line of t.split('\n')) longest = Math.max(longest, line.length);
  }
  return Math.min(max, Math.max(min, longest + 2));
}
