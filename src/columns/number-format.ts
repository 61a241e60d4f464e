/**
 * One reading per number (issue 13): how the numbers of one worklist are written,
 * decided once per file, and every cell read by that decision alone.
 *
 * - A method may declare the format: `number_format: { decimal_mark: ",", grouping: "." }`.
 * - Otherwise the file's own text cells decide. `0,788`, `12,5` and `1.234,5` can only
 *   have a decimal comma; `0.875`, `12.25` and `1,234.5` only a decimal point. The mark
 *   with more such cells wins (the others are refused, each with its readings). With
 *   none, or as many of each, the delimiter breaks the tie (a semicolon file has a
 *   decimal comma, any other a point), and the decision says so.
 * - Digit grouping is never guessed: without a declaration, a number that only grouping
 *   can read (`1.234,5`, `1.234.567` in a decimal-comma file) is read, and one that the
 *   other decimal mark reads differently (`1.234`: 1234, or 1.234) is refused.
 * - A cell the decided format cannot read (`0,5` in a decimal-point file, `1.234` in a
 *   decimal-comma file whose grouping is not known) is refused with its readings. So is
 *   a cell that reads differently with the other mark (`1.234`: 1.234, or 1234 with
 *   thousands grouped by points) when the mark itself was only a tie-break: a guess
 *   could be a silent thousandfold error.
 *
 * Pure functions; the columns stage applies them (table.ts).
 */

import type { DecimalMark, FormatBasis, Grouping, NumberFormat } from '../domain/number-format.js';

export type { DecimalMark, FormatBasis, Grouping, NumberFormat } from '../domain/number-format.js';

export interface FormatDeclaration {
  decimal_mark?: DecimalMark;
  grouping?: Grouping;
}

/** What one text cell shows: the decimal mark it must have, and the grouping it uses. */
export interface Evidence {
  decimal?: DecimalMark;
  grouping?: '.' | ',';
}

const EXPONENT = /[eE][+-]?\d+$/;

/** The digits-and-marks core of a number text (no sign, no exponent), or undefined. */
function core(text: string): string | undefined {
  const t = text.trim().replace(/^[+-]/, '').replace(EXPONENT, '');
  return /^[\d.,]+$/.test(t) && /\d/.test(t) ? t : undefined;
}

/** Digits grouped in threes by `sep` ("1.234", "12.345.678"): a first group of 1–3 digits not led by 0. */
function isGrouped(t: string, sep: string): boolean {
  const parts = t.split(sep);
  return parts.length >= 2 && /^[1-9]\d{0,2}$/.test(parts[0]!) && parts.slice(1).every((p) => /^\d{3}$/.test(p));
}

const other = (m: DecimalMark): DecimalMark => (m === '.' ? ',' : '.');

const NOTHING: Evidence = Object.freeze({});
const POINT: Evidence = Object.freeze({ decimal: '.' as const });
const COMMA: Evidence = Object.freeze({ decimal: ',' as const });

/** What a text cell shows about the decimal mark and grouping, if anything. */
export function evidenceOf(text: string): Evidence {
  // Fast path for the common cell, digits with at most one mark ("24.29", "1000", "0,788"): one scan, no regex.
  let marks = 0;
  let at = -1;
  let plain = text.length > 0;
  for (let i = 0; i < text.length && plain; i++) {
    const c = text.charCodeAt(i);
    if (c === 46 || c === 44) {
      marks++;
      at = i;
    } else if (c < 48 || c > 57) plain = false;
  }
  if (plain && marks <= 1) {
    if (marks === 0) return NOTHING;
    const before = at;
    const after = text.length - at - 1;
    // "1.234": a decimal mark, or thousands grouped; a leading 0 or another length of either part rules grouping out.
    const couldGroup = after === 3 && before >= 1 && before <= 3 && text.charCodeAt(0) !== 48;
    if (couldGroup) return NOTHING;
    return text.charCodeAt(at) === 46 ? POINT : COMMA;
  }
  const t = core(text);
  if (t === undefined) return {};
  const dots = t.split('.').length - 1;
  const commas = t.split(',').length - 1;
  if (dots === 0 && commas === 0) return {};
  if (dots > 0 && commas > 0) {
    // Both: the last is the decimal mark, the other groups ("1.234,5", "1,234.5").
    const decimal: DecimalMark = t.lastIndexOf(',') > t.lastIndexOf('.') ? ',' : '.';
    return { decimal, grouping: other(decimal) };
  }
  const sep: DecimalMark = dots > 0 ? '.' : ',';
  if (dots + commas > 1) return { decimal: other(sep), grouping: sep }; // "1.234.567": the mark twice groups
  // One mark once: a decimal mark unless it could be grouping ("1.234"); an exponent rules grouping out.
  if (!EXPONENT.test(text.trim()) && isGrouped(t, sep)) return {};
  return { decimal: sep };
}

export function markName(mark: DecimalMark): string {
  return mark === ',' ? 'comma' : 'point';
}

function groupingName(g: Grouping): string {
  return g === '.' ? 'points' : g === ',' ? 'commas' : g === ' ' ? 'spaces' : g === "'" ? 'apostrophes' : 'nothing';
}

/** The file's format: declared by the method, or decided from its numeric text cells, the delimiter breaking a tie. */
export function decideFormat(texts: Iterable<string>, options: { declared?: FormatDeclaration; delimiter?: string } = {}): NumberFormat {
  const declared = options.declared ?? {};
  let point = 0;
  let comma = 0;
  let pointExample = '';
  let commaExample = '';
  const groupingSeen: Record<'.' | ',', string> = { '.': '', ',': '' };
  for (const text of texts) {
    const e = evidenceOf(text);
    if (e.decimal === '.') {
      if (point++ === 0) pointExample = text.trim();
    } else if (e.decimal === ',') {
      if (comma++ === 0) commaExample = text.trim();
    }
    if (e.grouping && groupingSeen[e.grouping] === '') groupingSeen[e.grouping] = text.trim();
  }
  let decimal: DecimalMark;
  let basis: FormatBasis;
  let how: string;
  const cells = (k: number) => `${k} cell${k === 1 ? '' : 's'}`;
  if (declared.decimal_mark) {
    decimal = declared.decimal_mark;
    basis = 'declared';
    how = `decimal ${markName(decimal)}, declared by the method`;
  } else if (point !== comma) {
    decimal = comma > point ? ',' : '.';
    basis = 'cells';
    const [won, example, lost] = decimal === ',' ? [comma, commaExample, point] : [point, pointExample, comma];
    how = `decimal ${markName(decimal)}, from the file (${cells(won)} such as "${example}"${lost ? `; ${cells(lost)} written with a decimal ${markName(other(decimal))} ${lost === 1 ? 'is' : 'are'} refused` : ''})`;
  } else {
    decimal = options.delimiter === ';' ? ',' : '.';
    basis = 'delimiter';
    const why = point === 0 ? 'no cell shows its decimal mark' : `as many cells show a decimal point as a comma (${point})`;
    const kind = options.delimiter === ';' ? 'semicolon' : options.delimiter === '\t' ? 'tab' : options.delimiter === ',' ? 'comma' : undefined;
    how = `decimal ${markName(decimal)}, from the ${kind ? `${kind} delimiter` : 'usual default'} (${why})`;
  }
  let grouping: Grouping = 'none';
  let groupingKnown = false;
  if (declared.grouping !== undefined) {
    grouping = declared.grouping;
    groupingKnown = true;
    how += grouping === 'none' ? ', no digit grouping (declared)' : `, thousands grouped by ${groupingName(grouping)} (declared)`;
  } else {
    // Not declared: a number only grouping can read ("1.234,5") is read, one that two formats read
    // differently ("1.234") is refused; the grouping is never guessed.
    how += groupingSeen[other(decimal)] !== '' ? `, digit grouping not declared (cells such as "${groupingSeen[other(decimal)]}" are read where only one reading fits)` : ', no digit grouping';
  }
  const short = `decimal ${markName(decimal)}${grouping === 'none' ? '' : `, thousands grouped by ${groupingName(grouping)}`}`;
  return { decimal, grouping, basis, groupingKnown, how, short };
}

/** Read `text` with one decimal mark and grouping; undefined when that format cannot read it. */
export function readAs(text: string, decimal: DecimalMark, grouping: Grouping): number | undefined {
  let t = text.trim();
  const sign = /^[+-]/.test(t) ? t[0]! : '';
  t = t.slice(sign.length);
  const exp = EXPONENT.exec(t)?.[0] ?? '';
  t = t.slice(0, t.length - exp.length);
  const at = t.lastIndexOf(decimal);
  let int = at < 0 ? t : t.slice(0, at);
  const frac = at < 0 ? '' : t.slice(at + 1);
  if (grouping !== 'none') {
    const g = grouping === ' ' ? /[ \u00a0\u202f]/g : grouping === '.' ? /\./g : grouping === ',' ? /,/g : /'/g;
    if (g.test(int)) {
      const marked = int.replace(g, '|');
      if (!isGrouped(marked, '|')) return undefined;
      int = marked.split('|').join('');
    }
  }
  // Only digits are left on either side of the mark: another mark here means another format.
  if (!/^\d*$/.test(int) || !/^\d*$/.test(frac) || int + frac === '') return undefined;
  const value = Number(`${sign}${int || '0'}${at < 0 ? '' : `.${frac || '0'}`}${exp}`);
  return Number.isFinite(value) ? value : undefined;
}

export type NumberReading = { ok: true; value: number } | { ok: false; reason: string };

/**
 * Every other way a text reads, each only where the text holds the mark it takes: the file's
 * decimal mark with thousands grouped by the other mark; the other decimal mark alone; the
 * other decimal mark with thousands grouped by the file's mark.
 */
function otherReadings(t: string, format: NumberFormat, mine?: number): string[] {
  const m = format.decimal;
  const o = other(m);
  const seen = new Set<number>(mine === undefined ? [] : [mine]);
  const out: string[] = [];
  const add = (value: number | undefined, words: string) => {
    if (value === undefined || seen.has(value)) return;
    seen.add(value);
    out.push(`${value} ${words}`);
  };
  if (t.includes(o)) {
    if (format.grouping !== o) add(readAs(t, m, o), `with thousands grouped by ${groupingName(o)}`);
    add(readAs(t, o, 'none'), `with a decimal ${markName(o)}`);
  }
  if (t.includes(m)) add(readAs(t, o, m), `with thousands grouped by ${groupingName(m)} and a decimal ${markName(o)}`);
  return out;
}

/** A text of digits with at most one mark, that mark `decimal`, as a number; undefined for anything else. */
function plainDecimal(text: string, decimal: DecimalMark): number | undefined {
  const n = text.length;
  if (n === 0 || n > 20) return undefined;
  let at = -1;
  for (let i = 0; i < n; i++) {
    const c = text.charCodeAt(i);
    if (c >= 48 && c <= 57) continue;
    if ((c === 46 || c === 44) && at < 0 && text[i] === decimal) {
      at = i;
      continue;
    }
    return undefined;
  }
  if (at === 0 && n === 1) return undefined;
  return Number(at < 0 || decimal === '.' ? text : `${text.slice(0, at)}.${text.slice(at + 1)}`);
}

/** What to do about a refused cell, by how the format was reached. */
function fixFor(format: NumberFormat): string {
  return format.basis === 'declared'
    ? "the method's number_format says otherwise: correct the cell, or the method"
    : 'declare the number format in the method (number_format) to read it that way';
}

/**
 * Read one text cell with the file's format. An empty reason means "not a number in any
 * format": the caller says what it wanted there. The caller adds the cell's text.
 */
export function readNumber(text: string, format: NumberFormat): NumberReading {
  // Fast path for the common cell: digits, at most one mark and that one the file's decimal mark ("24.29"),
  // read at once unless the mark was only a guess and the cell could be grouping ("1.234").
  const fast = plainDecimal(text, format.decimal);
  if (fast !== undefined && (format.basis !== 'delimiter' || evidenceOf(text).decimal !== undefined || !/[.,]/.test(text))) {
    return { ok: true, value: fast };
  }
  const t = text.trim();
  const mine = readAs(t, format.decimal, format.grouping);
  if (mine !== undefined) {
    // Only a guessed mark leaves "1.234" open: 1.234, or 1234 grouped by points.
    if (format.basis === 'delimiter' && !format.groupingKnown && evidenceOf(t).decimal === undefined && /[.,]/.test(t)) {
      const readings = otherReadings(t, format, mine);
      if (readings.length > 0) {
        return {
          ok: false,
          reason: `could be read two ways: ${mine} with a ${format.short} (only a guess: no cell of the file shows its decimal mark), or ${readings.join(', or ')}; ${fixFor(format)}`,
        };
      }
    }
    return { ok: true, value: mine };
  }
  if (!format.groupingKnown) {
    // Thousands grouped by the other mark: read when nothing else reads it ("1.234,5", "1.234.567"),
    // refused when the other decimal mark reads it differently ("1.234": 1234, or 1.234).
    const grouped = readAs(t, format.decimal, other(format.decimal));
    if (grouped !== undefined) {
      const alt = readAs(t, other(format.decimal), 'none') ?? readAs(t, other(format.decimal), format.decimal);
      if (alt === undefined || alt === grouped) return { ok: true, value: grouped };
      return {
        ok: false,
        reason: `could be read two ways: ${grouped} with the file's ${format.short} and thousands grouped by ${groupingName(other(format.decimal))}, or ${alt} with a decimal ${markName(other(format.decimal))}; ${fixFor(format)}`,
      };
    }
  }
  const readings = otherReadings(t, format);
  if (readings.length === 0) return { ok: false, reason: '' };
  return { ok: false, reason: `expected a number with the file's ${format.short}; it would read ${readings.join(', or ')}: ${fixFor(format)}` };
}
