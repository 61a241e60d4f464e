import type { RawCell } from '../read/types.js';
import { readNumber, type NumberFormat } from './number-format.js';

/**
 * Reading one cell as a number, with the file's number format (number-format.ts):
 * plain decimals and exponents, a leading + or −, surrounding spaces, the file's
 * decimal mark and, where it is known, its digit grouping. A number cell (XLSX) is
 * taken as it is. Refused with a reason: other text, Infinity/NaN, numbers beyond the
 * double range, and a text the file's format cannot read or reads only one of two ways.
 */
export type NumberCell = { ok: true; value: number } | { ok: false; reason: string };

export const EMPTY: NumberCell = { ok: true, value: NaN };

export function parseNumberCell(cell: RawCell, format: NumberFormat): NumberCell {
  if (cell === null) return EMPTY;
  if (typeof cell === 'number') {
    return Number.isFinite(cell) ? { ok: true, value: cell } : { ok: false, reason: 'expected a finite number' };
  }
  const text = cell.trim();
  if (text === '') return EMPTY;
  const read = readNumber(text, format);
  if (read.ok) return read;
  if (read.reason !== '') return read;
  if (/^[+-]?(inf|infinity|nan)$/i.test(text)) return { ok: false, reason: 'expected a finite number' };
  if (/^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)[eE][+-]?\d+$/.test(text)) return { ok: false, reason: 'expected a number within the double-precision range' };
  return { ok: false, reason: 'expected a number' };
}

/** A raw cell as text for messages and text fields (numbers in shortest form). */
export function cellText(cell: RawCell): string {
  if (cell === null) return '';
  return typeof cell === 'number' ? String(cell) : cell;
}
