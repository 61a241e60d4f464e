import type { RawCell } from '../read/types.js';

/**
 * Reading one cell as a number. Accepted: plain decimals and exponents, a
 * leading + or −, surrounding spaces; in a decimal-comma file, a comma as the
 * decimal mark (and dots as thousands separators, "1.234,5"). Refused with a
 * reason: other text, Infinity/NaN, numbers beyond the double range.
 */
export type NumberCell = { ok: true; value: number } | { ok: false; reason: string };

const DECIMAL = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;

export const EMPTY: NumberCell = { ok: true, value: NaN };

export function parseNumberCell(cell: RawCell, decimalComma: boolean): NumberCell {
  if (cell === null) return EMPTY;
  if (typeof cell === 'number') {
    return Number.isFinite(cell) ? { ok: true, value: cell } : { ok: false, reason: 'expected a finite number' };
  }
  let text = cell.trim();
  if (text === '') return EMPTY;
  if (decimalComma && text.includes(',')) {
    text = text.replace(/\.(?=\d{3}(?:\D|$))/g, '').replace(',', '.');
  }
  if (!DECIMAL.test(text)) {
    if (/^[+-]?(inf|infinity|nan)$/i.test(text)) return { ok: false, reason: 'expected a finite number' };
    return { ok: false, reason: 'expected a number' };
  }
  const value = Number(text);
  if (!Number.isFinite(value)) return { ok: false, reason: 'expected a number within the double-precision range' };
  return { ok: true, value };
}

/** A raw cell as text for messages and text fields (numbers in shortest form). */
export function cellText(cell: RawCell): string {
  if (cell === null) return '';
  return typeof cell === 'number' ? String(cell) : cell;
}
