/**
 * Shared formulas (ECMA-376 Part 1, §18.3.1.40 `f`, t="shared"): a writer may
 * store a formula once, in the first cell of a range, and give the other cells
 * of the range only its group index. Each such cell holds the first cell's
 * formula with its relative references moved by the cell's offset from the
 * first (as copying the formula there would move them); `$` parts stay.
 */

const COLUMN_LIMIT = 16_384;
const ROW_LIMIT = 1_048_576;

// A text constant, a quoted sheet name, or an A1 reference not inside a name and not a function name ("LOG10(").
const TOKENS = /("(?:[^"]|"")*")|('(?:[^']|'')*')|(?<![A-Za-z0-9_.])(\$?)([A-Za-z]{1,3})(\$?)(\d{1,7})(?![A-Za-z0-9_(])/g;

/** "B" → 2. */
export function columnNumber(letters: string): number {
  let n = 0;
  for (const ch of letters.toUpperCase()) n = n * 26 + (ch.charCodeAt(0) - 64);
  return n;
}

function letters(column: number): string {
  let s = '';
  for (let k = column; k > 0; k = Math.floor((k - 1) / 26)) s = String.fromCharCode(65 + ((k - 1) % 26)) + s;
  return s;
}

/** `formula` as it reads in a cell `rows` below and `columns` right of its first cell; undefined when a reference leaves the sheet. */
export function shiftFormula(formula: string, rows: number, columns: number): string | undefined {
  if (rows === 0 && columns === 0) return formula;
  let outside = false;
  const out = formula.replace(TOKENS, (m, text?: string, sheet?: string, colAbs?: string, col?: string, rowAbs?: string, row?: string) => {
    if (text !== undefined || sheet !== undefined) return m;
    let c = columnNumber(col!);
    let r = Number(row);
    if (c > COLUMN_LIMIT || r < 1 || r > ROW_LIMIT) return m; // not a reference (a name such as "ABCD1" is longer)
    if (colAbs === '') c += columns;
    if (rowAbs === '') r += rows;
    if (c < 1 || c > COLUMN_LIMIT || r < 1 || r > ROW_LIMIT) outside = true;
    return `${colAbs}${letters(c)}${rowAbs}${r}`;
  });
  return outside ? undefined : out;
}
