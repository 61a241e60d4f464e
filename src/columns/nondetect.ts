/**
 * Non-detects are results (issue 13): the words instruments write for "not detected"
 * in the result column, read as not detected instead of as bad numbers. A `< 0.5`
 * (in the file's number format) is not detected with its stated limit.
 *
 * Words are compared without case, spaces or dots ("N.D.", "n.d." and "nd" are one
 * word); the method may add its own (`non_detects: ["nicht nachweisbar"]`).
 */
import { readNumber, type NumberFormat } from './number-format.js';

/** The words phasebook knows (common practice in instrument exports; no single source). */
export const NON_DETECT_WORDS = ['ND', 'N.D.', 'not detected', 'No Peak', 'BLQ', 'BQL', '<LLOQ', '<LOQ', '<LOD', '<RL', '<MDL', '< LLOQ', 'below LLOQ'];

export function nonDetectKey(word: string): string {
  return word.toLowerCase().replace(/[\s.]+/g, '');
}

export type NonDetect = { limit?: number } | undefined;

export class NonDetectReader {
  private readonly words: Set<string>;

  constructor(extraWords: readonly string[] = []) {
    this.words = new Set([...NON_DETECT_WORDS, ...extraWords].map(nonDetectKey));
  }

  /** Whether the text is one of the words (not a "< number"). */
  isWord(text: string): boolean {
    return this.words.has(nonDetectKey(text.trim()));
  }

  /** A non-detect (with its stated limit, as written in the cell's units), or undefined. */
  read(text: string, format: NumberFormat): NonDetect {
    // A cell that starts like a number ("24.29", "-0.02", ".5") is no word and no "<": not looked up.
    const c = text.charCodeAt(0);
    if ((c >= 48 && c <= 57) || c === 43 || c === 45 || c === 46) return undefined;
    const t = text.trim();
    if (t === '') return undefined;
    if (this.words.has(nonDetectKey(t))) return {};
    const m = /^<\s*(.+)$/.exec(t);
    if (m) {
      const n = readNumber(m[1]!, format);
      if (n.ok && Number.isFinite(n.value) && n.value >= 0) return { limit: n.value };
    }
    return undefined;
  }

  /** The number part of a `< number` cell, for the evidence of the number format. */
  static numberPart(text: string): string | undefined {
    return /^\s*<\s*([\d.,]+)\s*$/.exec(text)?.[1];
  }
}
