import type { NumberFormat } from '../../columns/number-format.js';
/**
 * The Provenance sheet: where the numbers came from and how to check them. The
 * worklist's name, size and SHA-256, the method's name and SHA-256, phasebook and
 * Node.js versions, the command line, the time, rows in and out, flag counts by
 * code, the comparison rule, the CSV's formula escaping, the integrity digest,
 * row problems found while reading, a blank sign-off block and the cautions.
 *
 * Column A holds a key, column B its value; `phasebook verify` finds values by key.
 */
import { FLAG_CODES } from '../../issues.js';
import type { RecalcResult } from '../../pipeline.js';
import { calibrationSentence, reportingSentence } from '../../method/reporting.js';
import { COMPARISON_RULE } from '../../qc/compare.js';
import type { RawTable } from '../../read/types.js';
import { SheetBuilder } from './builder.js';
import { cell, type CellValue, type SheetPlan } from './cells.js';
import { DIGEST_DESCRIPTION } from './digest.js';
import { WORKBOOK_FORMAT, type RunInfo } from './options.js';

export const PROVENANCE_SHEET = 'Provenance';
export const PROVENANCE_MARKER = 'phasebook workbook';
export const READING_PROBLEMS_TITLE = 'Problems found while reading the worklist';
export const FLAG_COUNTS_TITLE = 'Flag counts';

/** Keys of column A that verify reads. */
export const KEYS = {
  worklistName: 'worklist file',
  worklistBytes: 'worklist size (bytes)',
  worklistSha: 'worklist SHA-256',
  readAs: 'read as',
  decimalComma: 'decimal comma',
  numberFormat: 'number format',
  numberFormatCode: 'number format (as read back)',
  rowsIn: 'rows in',
  rowsOut: 'rows out',
  worklistRows: 'worklist rows',
  inputColumns: 'input columns',
  methodName: 'method name',
  methodFile: 'method file',
  methodSha: 'method SHA-256',
  version: 'phasebook version',
  node: 'Node.js version',
  command: 'command line',
  time: 'time (ISO 8601, UTC)',
  formulas: 'Results formulas',
  formulaRowLimit: 'formula row limit',
  maxNotes: 'most cell notes',
  digest: 'integrity digest (SHA-256)',
  columnChecks: 'column checks',
} as const;

export const FORMULAS_LIVE = 'live';
export const FORMULAS_VALUES = 'values only';

/** The cautions of the README ("Safety and professional use"). */
export const CAUTIONS: readonly string[] = [
  'Extraction solvents are hazardous. Dichloromethane, chloroform, hexane, ethyl acetate, diethyl ether and their kind are ' +
    'flammable and/or toxic; separatory funnels build pressure and must be vented. Work in a fume hood with the protective ' +
    'equipment your safety data sheets and local regulations require. phasebook calculates; it does not make a procedure safe.',
  "Results for clinical, forensic or regulatory use need a validated method and licensed review. phasebook's numbers are only " +
    'as good as the method file and the data it is given; the generic limits it ships with are common defaults, not your ' +
    "method's validated criteria. A qualified, licensed professional must review and sign off results before they are reported. " +
    'Local codes, accreditation requirements and licensed practice take precedence over anything here.',
];

export const CSV_ESCAPING =
  "formula-escaped: a text cell of the results CSV that starts with = + - @, tab, CR, LF or NUL carries a leading ' and is quoted " +
  '(OWASP CSV Injection); numbers are written as numbers, unrounded';

/** How the worklist was read, in words (e.g. `CSV, delimiter semicolon, decimal comma`). */
export function describeFormat(format: RawTable['format'], numbers?: NumberFormat): string {
  if (format.kind === 'xlsx') return `XLSX, sheet "${format.sheet ?? ''}"`;
  const names: Record<string, string> = { ',': 'comma', ';': 'semicolon', '\t': 'tab' };
  const d = format.delimiter ?? ',';
  const decimal = numbers ? numbers.decimal === ',' : format.decimalComma;
  return `CSV, delimiter ${names[d] ?? JSON.stringify(d)}, decimal ${decimal ? 'comma' : 'point'}`;
}

/** The number format as one cell verify reads back: `decimal ","; grouping "."; from cells; grouping known`. */
export function numberFormatCode(f: NumberFormat): string {
  return `decimal ${JSON.stringify(f.decimal)}; grouping ${JSON.stringify(f.grouping)}; from ${f.basis}; grouping ${f.groupingKnown ? 'known' : 'not known'}`;
}

/** The number format of a numberFormatCode cell (with its words), or undefined when the cell is not one. */
export function parseNumberFormatCode(code: string, how: string): NumberFormat | undefined {
  const m = /^decimal "([.,])"; grouping "(none|[.,' ])"; from (declared|cells|delimiter); grouping (known|not known)$/.exec(code);
  if (!m) return undefined;
  const decimal = m[1] as NumberFormat['decimal'];
  const grouping = m[2] as NumberFormat['grouping'];
  const short = `decimal ${decimal === ',' ? 'comma' : 'point'}${grouping === 'none' ? '' : `, thousands grouped by ${({ '.': 'points', ',': 'commas', ' ': 'spaces', "'": 'apostrophes' } as const)[grouping]}`}`;
  return { decimal, grouping, basis: m[3] as NumberFormat['basis'], groupingKnown: m[4] === 'known', how, short };
}

/** 1-based row numbers as ranges: `2-41` or `2-10, 12-41`. */
export function rowRanges(rows: ArrayLike<number>): string {
  const parts: string[] = [];
  let i = 0;
  while (i < rows.length) {
    let j = i;
    while (j + 1 < rows.length && rows[j + 1]! === rows[j]! + 1) j++;
    parts.push(i === j ? String(rows[i]) : `${rows[i]}-${rows[j]}`);
    i = j + 1;
  }
  return parts.join(', ');
}

/** The sign-off lines: column B of each is the reviewer's to type into (never compared, never signed). */
export const SIGN_OFF_KEYS = ['prepared by', 'prepared on', 'reviewed by', 'reviewed on', 'comments'] as const;

export interface ProvenanceFacts {
  run: RunInfo;
  /** How the worklist was read (describeFormat). */
  readAs: string;
  formulas: boolean;
  formulaRowLimit: number;
  maxNotes: number;
  digest: string;
  /** ColumnChecks.text() of the Results input columns. */
  columnChecks?: string;
}

export function planProvenanceSheet(result: RecalcResult, facts: ProvenanceFacts): SheetPlan {
  const b = new SheetBuilder();
  const m = result.method;
  b.add([cell(PROVENANCE_MARKER, { style: 'title' }), WORKBOOK_FORMAT], { labels: [PROVENANCE_MARKER, PROVENANCE_MARKER] });
  b.blank();

  b.title('Worklist', 'section');
  b.keyValue(KEYS.worklistName, result.worklist.name);
  b.keyValue(KEYS.worklistBytes, result.worklist.bytes);
  b.keyValue(KEYS.worklistSha, result.worklist.sha256);
  b.keyValue(KEYS.readAs, facts.readAs);
  b.keyValue(KEYS.decimalComma, result.table.numberFormat.decimal === ',' ? 'yes' : 'no');
  b.keyValue(KEYS.rowsIn, result.rowsIn);
  b.keyValue(KEYS.rowsOut, result.rowsOut);
  b.keyValue(KEYS.worklistRows, rowRanges(result.raw.rowNumbers));
  b.keyValue(KEYS.inputColumns, result.raw.headers.length);
  b.keyValue(KEYS.numberFormat, result.table.numberFormat.how);
  b.keyValue(KEYS.numberFormatCode, numberFormatCode(result.table.numberFormat));
  b.blank();

  b.title('Method', 'section');
  b.keyValue(KEYS.methodName, m.name);
  b.keyValue('method title', m.title);
  b.keyValue('method version', m.version ?? null);
  b.keyValue(KEYS.methodFile, m.file);
  b.keyValue(KEYS.methodSha, m.sha256);
  b.blank();

  b.title('Software and run', 'section');
  b.keyValue(KEYS.version, facts.run.version);
  b.keyValue(KEYS.node, facts.run.node ?? process.version);
  b.keyValue(KEYS.command, facts.run.command);
  b.keyValue(KEYS.time, facts.run.timestamp);
  b.keyValue(KEYS.formulas, facts.formulas ? FORMULAS_LIVE : FORMULAS_VALUES);
  b.keyValue(KEYS.formulaRowLimit, facts.formulaRowLimit);
  b.keyValue(KEYS.maxNotes, facts.maxNotes);
  b.blank();

  b.title(FLAG_COUNTS_TITLE, 'section');
  const counts = new Map<string, number>();
  for (const f of result.flags) counts.set(f.code, (counts.get(f.code) ?? 0) + 1);
  b.table(
    ['code', 'flags'],
    FLAG_CODES.map((code) => [code, counts.get(code) ?? 0]),
  );
  b.keyValue('rows with flags', result.rowFlags.filter((x) => x !== '').length);
  b.keyValue('control rows that fail', result.qc.status.filter((s) => s === 'fail').length);
  b.keyValue('batch verdict', result.verdict.verdict);
  b.blank();

  b.title('Rules', 'section');
  b.keyValue('comparison with limits', COMPARISON_RULE);
  b.keyValue('results CSV', CSV_ESCAPING);
  b.keyValue('rounding', 'numbers are stored unrounded; number formats round the display only');
  b.keyValue('reported results', cell(reportingSentence(result.method), { style: 'wrap' }));
  b.keyValue('calibration', cell(calibrationSentence(result.method), { style: 'wrap' }));
  b.blank();

  b.title('Integrity', 'section');
  b.keyValue(KEYS.digest, facts.digest);
  b.keyValue('what the digest covers', cell(DIGEST_DESCRIPTION, { style: 'wrap' }));
  b.keyValue(
    'row check',
    "Results, last column: first 16 hex digits of a SHA-256 over the row's input cells as written (a JSON array, numbers to 15 significant digits)",
  );
  b.keyValue(KEYS.columnChecks, facts.columnChecks ?? '');
  b.keyValue(
    'what a column check covers',
    'per input column of the Results sheet: first 8 hex digits of a SHA-256 over its cells, header included, one line each (the JSON of the value, numbers to 15 significant digits); with the row check it names an input cell changed after writing',
  );
  b.keyValue('to check this workbook', `phasebook verify ${result.worklist.name.replace(/\.[^.]*$/, '')}.xlsx`);
  b.blank();

  b.title(READING_PROBLEMS_TITLE, 'section');
  b.table(
    ['worklist row', 'column', 'message'],
    result.raw.rowProblems.map((p): CellValue[] => [result.raw.rowNumbers[p.row]!, p.column ?? null, p.message]),
  );
  b.blank();

  b.title('Sign-off', 'section');
  for (const key of SIGN_OFF_KEYS) {
    b.keyValue(key, cell(null, { style: 'sign-off', free: true }));
  }
  b.blank();

  b.title('Cautions', 'section');
  for (const text of CAUTIONS) b.add([null, cell(text, { style: 'wrap' })]);

  return b.plan(PROVENANCE_SHEET, { widths: [30, 90, 40] });
}
