/** How a worklist writes its numbers, as decided once per file (columns/number-format.ts decides and reads). */

export type DecimalMark = '.' | ',';
/** What groups thousands: nothing, or a point, comma, space (no-break spaces too) or apostrophe. */
export type Grouping = 'none' | '.' | ',' | ' ' | "'";
/** How the decimal mark was reached. */
export type FormatBasis = 'declared' | 'cells' | 'delimiter';

export interface NumberFormat {
  decimal: DecimalMark;
  grouping: Grouping;
  basis: FormatBasis;
  /** True when the method declared the grouping: grouped numbers are then read by it, never refused. */
  groupingKnown: boolean;
  /** How the format was reached, in words (Provenance, the terminal). */
  how: string;
  /** The format in a few words, for messages: "decimal comma, thousands grouped by points". */
  short: string;
}
