/**
 * A workbook's content as it means, not as a program spells it: what the row
 * check, the integrity digest (workbook format 4) and the signatures are taken
 * over, so that a workbook opened and saved unchanged by a spreadsheet program
 * (LibreOffice, Excel, openpyxl) still checks.
 *
 * - A number: to 15 significant digits (spreadsheet programs keep and save
 *   doubles to 15 digits; 0.11800000000000001 comes back as 0.118), written as
 *   JavaScript writes the shortest text for that value.
 * - A text: as it is ("" counts as empty).
 * - A formula: its meaning, not its spelling (canonicalFormula), and never its
 *   cached result, which a program may recompute or drop (openpyxl does).
 */
import type { CellValue } from './cells.js';

/** Significant digits a spreadsheet keeps of a number (common practice: Excel and LibreOffice save 15). */
export const SPREADSHEET_DIGITS = 15;

/**
 * A number to 15 significant digits, as a number (-0 as 0): its shortest decimal text
 * (the one JavaScript, openpyxl and Excel write) rounded half away from zero. That is
 * how LibreOffice saves a number (measured: 89.18202590278685, whose double lies just
 * below ...2786850, is saved as 89.1820259027869, where toPrecision(15) gives ...868),
 * so a saved value maps to the same number as the one written; a value of 15 digits
 * or fewer is itself.
 */
export function canonicalNumber(x: number): number {
  if (Number.isInteger(x) && x < 1e15 && x > -1e15) return x === 0 ? 0 : x; // the common case, exact already
  if (!Number.isFinite(x)) return x;
  const shortest = String(x);
  if (shortest.length <= SPREADSHEET_DIGITS) return x; // at most 15 characters: at most 15 digits (lab values mostly)
  if (!Number.isInteger(x)) {
    // Rounding the exact double to 15 digits (toPrecision) is rounding its shortest digits, except when those
    // are exactly 16 ending in 5 (a decimal tie, which the spreadsheet takes away from zero): no other
    // 16- or 17-digit decimal that reads back as x lies across a 15-digit boundary from them.
    const { count, last } = significantDigits(shortest);
    if (count <= SPREADSHEET_DIGITS) return x;
    if (!(count === SPREADSHEET_DIGITS + 1 && last === 53)) {
      const n = Number(x.toPrecision(SPREADSHEET_DIGITS));
      return n === 0 ? 0 : n;
    }
  }
  const text = x.toExponential(); // shortest round-trip digits: "-8.918202590278685e+1"
  const e = text.indexOf('e');
  const negative = text.startsWith('-');
  const digits = text.slice(negative ? 1 : 0, e).replace('.', '');
  if (digits.length <= SPREADSHEET_DIGITS) return x === 0 ? 0 : x;
  let kept = BigInt(digits.slice(0, SPREADSHEET_DIGITS));
  if (digits.charCodeAt(SPREADSHEET_DIGITS) >= 53) kept += 1n; // "5" or more: half away from zero
  const exponent = Number(text.slice(e + 1)) - (SPREADSHEET_DIGITS - 1);
  const n = Number(`${negative ? '-' : ''}${kept}e${exponent}`);
  return n === 0 ? 0 : n;
}

/** How many significant digits a number's text has (leading zeros, sign, point and exponent left out), and the last one's char code. */
function significantDigits(text: string): { count: number; last: number } {
  let end = text.indexOf('e');
  if (end < 0) end = text.length;
  let count = 0;
  let last = 0;
  for (let i = 0; i < end; i++) {
    const c = text.charCodeAt(i);
    if (c < 48 || c > 57 || (count === 0 && c === 48)) continue;
    count++;
    last = c;
  }
  return { count, last };
}

/** Empty (undefined, null, "") as null; a number to 15 significant digits; text as it is. */
export function canonicalValue(v: CellValue | undefined): CellValue {
  if (v === undefined || v === null || v === '') return null;
  return typeof v === 'number' ? canonicalNumber(v) : v;
}

// A string constant, a quoted sheet name, spaces, `_xlfn.`/`_xlws.` prefixes, TRUE()/FALSE(), or a number constant.
const FORMULA_TOKENS =
  /("(?:[^"]|"")*")|('(?:[^']|'')*')|\s+|_xl(?:fn|ws)\.|\b(TRUE|FALSE)\(\)|(?<![A-Za-z0-9_.$])(\d+(?:\.\d*)?(?:[eE][+-]?\d+)?)/gi;
/** A sheet name that needs no quotes: a letter or "_" first, then letters, digits, "_" and "." (common practice). */
const PLAIN_SHEET_NAME = /^[A-Za-z_][A-Za-z0-9_.]*$/;
/** Looks like a cell reference (A1, R1C1): such a sheet name keeps its quotes. */
const REFERENCE_LIKE = /^(?:[A-Za-z]{1,3}\d+|R\d*C\d*)$/i;

/**
 * Formula text as compared: no "=", no `_xlfn.` prefixes, no spaces outside text
 * constants, TRUE()/FALSE() as TRUE/FALSE, quotes dropped around a sheet name that
 * needs none ('Method'!A1 as Method!A1), everything outside text constants in upper
 * case (function names, references and sheet names do not depend on case), and
 * number constants to 15 significant digits (999.9999999999999 is saved as 1000).
 */
export function canonicalFormula(f: string): string {
  let s = f.trim();
  if (s.startsWith('=')) s = s.slice(1);
  let out = '';
  let last = 0;
  FORMULA_TOKENS.lastIndex = 0;
  for (let m = FORMULA_TOKENS.exec(s); m !== null; m = FORMULA_TOKENS.exec(s)) {
    out += s.slice(last, m.index).toUpperCase();
    last = m.index + m[0].length;
    const [, quoted, sheet, bool, num] = m;
    if (quoted !== undefined) out += quoted;
    else if (sheet !== undefined) {
      const name = sheet.slice(1, -1).replaceAll("''", "'");
      out += PLAIN_SHEET_NAME.test(name) && !REFERENCE_LIKE.test(name) ? name.toUpperCase() : sheet.toUpperCase();
    } else if (bool !== undefined) out += bool.toUpperCase();
    else if (num !== undefined) out += String(canonicalNumber(Number(num)));
  }
  return out + s.slice(last).toUpperCase();
}

/** A cell as content: `{f: …}` for a formula (its cached value left out), else its canonical value. */
export type CanonicalCell = CellValue | { f: string };

export function canonicalCell(value: CellValue | undefined, formula: string | undefined): CanonicalCell {
  return formula !== undefined ? { f: canonicalFormula(formula) } : canonicalValue(value);
}
