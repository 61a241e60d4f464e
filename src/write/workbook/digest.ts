/**
 * The integrity digest recorded in the Provenance sheet: SHA-256 over a canonical
 * serialisation of what was handed over, so `phasebook verify` can recompute it
 * from the stored cells.
 *
 * Digest 3 (workbook format 4) is taken over the canonical content (canonical.ts),
 * so that a workbook saved unchanged by a spreadsheet program keeps it; one line each,
 * "\n" after every line:
 *   `phasebook integrity digest 3`
 *   every row of the Results sheet, header included, as a JSON array with one entry
 *     per column: null for an empty cell, a number to 15 significant digits, a text,
 *     or `{"f":1}` for a formula cell, never its cached result (verify compares each
 *     formula with the one phasebook writes, by meaning, cell by cell; hashing the
 *     formulas' text here would double the digest's cost on a large sheet);
 *   `method <SHA-256 of the method text on the Method sheet>`;
 *   every row of the acceptance limits table on the Method sheet, then of the in-house
 *     limits table where the method uses one, as a JSON array;
 *   `trends`, then the Trends sheet's history line, points-needed line and every row
 *     of its points table (each point's values up to its recovery), as a JSON array.
 */
import { createHash, type Hash } from 'node:crypto';
import { columnLetter, type CellValue } from './cells.js';
import { SPREADSHEET_DIGITS, canonicalNumber, canonicalValue } from './canonical.js';

export const DIGEST_HEADER = 'phasebook integrity digest 3';

export const DIGEST_DESCRIPTION =
  'SHA-256 over, one line each: "phasebook integrity digest 3"; every row of the Results sheet, header included, as a JSON array ' +
  '(empty cells null, numbers to 15 significant digits, texts as they are, a formula cell as {"f":1}, never its cached result: ' +
  'phasebook verify compares every formula with the one it writes); "method " and the SHA-256 of the method text on the Method sheet; every row of the acceptance limits table ' +
  'on the Method sheet (and of the in-house limits table, when the method uses in-house limits) as a JSON array; "trends", then the ' +
  "Trends sheet's QC history and points-needed lines and every row of its points table (values up to the recovery) as a JSON array. " +
  'A workbook opened and saved unchanged by a spreadsheet program keeps it. phasebook verify recomputes it from the stored cells.';

/** The JSON text of a cell's canonical value (canonical.ts), without a round trip through JSON.stringify for numbers. */
function canonicalJson(v: CellValue | undefined): string {
  if (typeof v === 'number') {
    const text = String(v);
    return text.length <= SPREADSHEET_DIGITS && v !== 0 ? text : String(canonicalNumber(v)); // at most 15 characters: canonical already
  }
  return v === undefined || v === null || v === '' ? 'null' : JSON.stringify(v);
}

/** Pending text is handed to the hash in pieces of about this many characters. */
const PENDING_LIMIT = 1 << 16;

export class IntegrityDigest {
  private readonly hash: Hash = createHash('sha256');
  /** Results lines not yet hashed (one update per line would cost more than the hashing). */
  private pending = '';

  constructor() {
    this.hash.update(`${DIGEST_HEADER}\n`, 'utf8');
  }

  /** One Results row: its values and, by column, whether a cell holds a formula (hashed as {"f":1}, never its result). */
  addResultsRow(values: readonly (CellValue | undefined)[], options: { formulas: readonly (boolean | undefined)[]; columnChecks?: ColumnChecks }): void {
    const width = Math.max(values.length, options.formulas.length);
    const checks = options.columnChecks;
    // The input columns, 0-based: [first, end).
    const first = checks ? checks.firstColumn - 1 : 0;
    const end = checks ? first + checks.columns : 0;
    let line = '[';
    for (let c = 0; c < width; c++) {
      if (c > 0) line += ',';
      const text = options.formulas[c] === true ? '{"f":1}' : canonicalJson(values[c]);
      if (c >= first && c < end) checks!.addCell(c - first, text);
      line += text;
    }
    this.pending += `${line}]\n`;
    if (this.pending.length > PENDING_LIMIT) this.flush();
  }

  addMethod(textSha256: string, limits: readonly (readonly (CellValue | undefined)[])[]): void {
    this.flush();
    this.hash.update(`method ${textSha256}\n`, 'utf8');
    for (const row of limits) this.hash.update(`${this.line(row)}\n`, 'utf8');
  }

  addTrends(rows: readonly (readonly (CellValue | undefined)[])[]): void {
    this.flush();
    this.hash.update('trends\n', 'utf8');
    for (const row of rows) this.hash.update(`${this.line(row)}\n`, 'utf8');
  }

  hex(): string {
    this.flush();
    return this.hash.digest('hex');
  }

  private line(row: readonly (CellValue | undefined)[]): string {
    return JSON.stringify(row.map((v) => canonicalValue(v)));
  }

  private flush(): void {
    if (this.pending === '') return;
    this.hash.update(this.pending, 'utf8');
    this.pending = '';
  }
}

/** SHA-256 of a text (the method file as the Method sheet holds it). */
export function sha256Text(text: string): string {
  return createHash('sha256').update(text, 'utf8').digest('hex');
}

/**
 * Column checks (workbook format 4): for each input column of the Results sheet, the first 8 hex
 * digits of a SHA-256 over its cells, header included, one line each: the JSON of the canonical
 * value (canonical.ts). With the row check, which names the row, they name the input cell typed
 * over. Written on the Provenance sheet as `A 1f2e3d4c, B …`.
 */
/** Cells of a column hashed at once. */
const CHECK_BATCH = 8192;

export class ColumnChecks {
  private readonly hashes: Hash[];
  /** Cell texts not yet hashed, per column (arrays joined in batches: a string grown cell by cell costs more). */
  private readonly pending: string[][];

  /**
   * `columns` input columns, the first of them at the sheet's 1-based column `firstColumn`
   * (results-layout.ts FIRST_INPUT_COLUMN).
   */
  constructor(
    readonly columns: number,
    readonly firstColumn: number,
  ) {
    this.hashes = Array.from({ length: columns }, () => createHash('sha256'));
    this.pending = Array.from({ length: columns }, () => []);
  }

  /** One cell of input column `c` (0-based among the input columns), as the JSON text of its canonical value (IntegrityDigest passes it on). */
  addCell(c: number, text: string): void {
    const pending = this.pending[c]!;
    pending.push(text);
    if (pending.length >= CHECK_BATCH) this.flush(c);
  }

  private flush(c: number): void {
    const pending = this.pending[c]!;
    if (pending.length === 0) return;
    this.hashes[c]!.update(`${pending.join('\n')}\n`, 'utf8');
    pending.length = 0;
  }

  text(): string {
    const parts: string[] = [];
    for (let c = 0; c < this.columns; c++) {
      this.flush(c);
      parts.push(`${columnLetter(this.firstColumn + c)} ${this.hashes[c]!.digest('hex').slice(0, 8)}`);
    }
    return parts.join(', ');
  }
}

/** `A 1f2e3d4c, B …` → the check of each column letter; undefined when it does not read so. */
export function parseColumnChecks(text: string): Map<string, string> | undefined {
  const out = new Map<string, string>();
  if (text.trim() === '') return out;
  for (const part of text.split(',')) {
    const m = /^\s*([A-Z]{1,3}) ([0-9a-f]{8})\s*$/.exec(part);
    if (!m) return undefined;
    out.set(m[1]!, m[2]!);
  }
  return out;
}
