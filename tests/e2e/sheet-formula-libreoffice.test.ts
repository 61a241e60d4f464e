/**
 * End-to-end proof that the translated formulas give the engine's numbers in a real spreadsheet
 * program: build an .xlsx with exceljs, let LibreOffice recalculate it, read the values back and
 * compare each with an independent reference (mathjs evaluating the method expression on plain
 * numbers, with the chemistry functions written here from REFERENCES.md §1).
 *
 * Skipped only when LibreOffice is not installed; CI installs it (see tests/helpers/libreoffice.ts).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import ExcelJS from 'exceljs';
import { all, create } from 'mathjs';
import type { MathNode, FunctionNode, SymbolNode } from 'mathjs';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { toSheetFormula, type SheetFormulaContext } from '../../src/write/sheet-formula.js';
import { parseAcidBase } from '../../src/chemistry/partition.js';
import { disposeLibreOfficeProfile, isLibreOfficeAvailable, recalcWithLibreOffice } from '../helpers/libreoffice.js';
import { skipWithout } from '../helpers/tools.js';

// ---- reference evaluator ------------------------------------------------------------------------

const math = create(all, { predictable: true });
// The engine compares text codes (sample_type == "ms"); stock mathjs `==` converts text to numbers.
math.import(
  {
    equal: math.typed('equal', { 'string, string': (a: string, b: string) => a === b }),
    unequal: math.typed('unequal', { 'string, string': (a: string, b: string) => a !== b }),
  },
  {},
);

/** Chemistry, written from the formulas in REFERENCES.md §1; NaN is an empty value. */
const chemistry = {
  // Weak acid: D = K/(1+10^(pH−pKa)); weak base: D = K/(1+10^(pKa−pH)) (Harvey §7.7; Harris).
  distribution_ratio: (k: number, ph: number, pka: number, acidBase: string): number =>
    acidBase === 'acid' ? k / (1 + 10 ** (ph - pka)) : acidBase === 'base' ? k / (1 + 10 ** (pka - ph)) : acidBase === 'neutral' ? k : NaN,
  // E = 1 − (V_aq/(V_aq + D·V_org))^n (IUPAC Gold Book F02503); no D → complete transfer.
  extraction_efficiency: (d: number, vAq: number, vOrg: number, n: number): number =>
    Number.isNaN(d) ? 1 : 1 - (vAq / (vAq + d * vOrg)) ** n,
  // %R = (found − background)/spike × 100 (EPA SW-846; REFERENCES.md §2).
  recovery_pct: (found: number, spike: number, background: number): number => ((found - background) / spike) * 100,
  // RPD = |a − b|/((a + b)/2) × 100 (REFERENCES.md §2).
  rpd_pct: (a: number, b: number): number => (Math.abs(a - b) / ((a + b) / 2)) * 100,
  if_empty: (x: number, fallback: number): number => (Number.isNaN(x) ? fallback : x),
};

type Value = number | string;
type Expected = number | '';

/** Evaluate `expr` for one row as the engine would; cross-row look-ups come from `cross`. */
function reference(
  expr: string,
  row: Record<string, Value>,
  cross: (fn: 'parent' | 'pair', symbol: string) => Value | undefined,
): Expected {
  const scope = new Map<string, unknown>(Object.entries(chemistry));
  for (const [k, v] of Object.entries(row)) scope.set(k, v);
  // parent(x)/pair(x) become plain symbols holding the other row's value.
  const node = math.parse(expr).transform((n: MathNode) => {
    if (n.type !== 'FunctionNode') return n;
    const f = n as FunctionNode;
    const name = f.fn.name;
    if (name !== 'parent' && name !== 'pair') return n;
    const symbol = (f.args[0] as SymbolNode).name;
    const key = `__${name}_${symbol}`;
    const v = cross(name, symbol);
    scope.set(key, v === undefined ? (typeof row[symbol] === 'string' ? '' : NaN) : v);
    return new math.SymbolNode(key);
  });
  const v: unknown = math.evaluate(node.toString(), scope);
  if (typeof v === 'boolean') return v ? 1 : 0;
  if (typeof v === 'number') return Number.isFinite(v) ? v : '';
  throw new Error(`reference gave ${String(v)} for ${expr}`);
}

// ---- cases on plain inputs ------------------------------------------------------------------------

interface Case {
  label: string;
  expr?: string;
  a?: number | null;
  b?: number | null;
  c?: number | null;
  d?: number | null;
  s?: string | null;
  /** Label of the row that parent(...) names. */
  parent?: string;
}

const CASE_COLUMNS = ['label', 'a', 'b', 'c', 'd', 's', 'result'] as const;
const CASES: Case[] = [
  { label: 'arithmetic', expr: 'a + b * c - d / 4', a: 1.5, b: 2, c: 3, d: 10 },
  // mathjs: −3^2 = −9 (a spreadsheet's plain -A2^2 is 9).
  { label: 'unary minus below ^', expr: '-a^2', a: 3 },
  // mathjs: 2^3^2 = 2^9 = 512 (a spreadsheet's plain A2^B2^C2 is 64).
  { label: '^ is right-associative', expr: 'a^b^c', a: 2, b: 3, c: 2 },
  { label: 'negative exponent', expr: 'a^-b', a: 2, b: 3 },
  { label: 'division grouping', expr: 'a / (b * c)', a: 12, b: 2, c: 3 },
  { label: 'subtraction grouping', expr: 'a - (b - c)', a: 10, b: 4, c: 3 },
  { label: 'implicit multiplication and exponent notation', expr: '2 a + 1e-3 b', a: 4, b: 5000 },
  { label: 'empty input', expr: 'a * b', a: null, b: 2 },
  // A blank cell reads 0 in a spreadsheet, which would give 5; the engine gives empty.
  { label: 'empty input times zero', expr: 'a * 0 + 5', a: null },
  { label: 'division by zero', expr: 'a / b', a: 1, b: 0 },
  { label: 'zero over zero', expr: 'a / b', a: 0, b: 0 },
  { label: 'text match, verbatim case and spaces', expr: 's == "ms" ? a : b', a: 1, b: 2, s: ' MS ' },
  { label: 'text no match', expr: 's == "ms" ? a : b', a: 1, b: 2, s: 'msd' },
  { label: 'blank text', expr: 's == "ms" or s == "msd" ? a : b', a: 1, b: 2, s: null },
  { label: 'text inequality', expr: 's != "blank"', s: 'Blank' },
  { label: 'comparison with an empty number', expr: 'a > 5 ? a : b', a: null, b: 7 },
  { label: 'comparison true', expr: 'a > 5 ? a : b', a: 6, b: 7 },
  { label: '!= with an empty number', expr: 'a != b', a: null, b: 1 },
  { label: '== of two empty numbers', expr: 'a == b', a: null, b: null },
  { label: 'not of an empty number', expr: 'not a', a: null },
  { label: 'and, or', expr: '(a < b and b <= c) or d > 100', a: 1, b: 2, c: 2, d: 0 },
  { label: 'condition on a failed computation', expr: 'a / b > 1 ? 1 : 2', a: 0, b: 0 },
  { label: 'if_empty, empty', expr: 'if_empty(a, 7) + b', a: null, b: 1 },
  { label: 'if_empty, filled', expr: 'if_empty(a, 7) + b', a: 2, b: 1 },
  { label: 'if_empty of 0/0', expr: 'if_empty(a / b, c)', a: 0, b: 0, c: 4 },
  // mathjs floor(−1.5) = −2, ceil(−1.5) = −1 (common practice: floor/ceil go towards ∓∞).
  { label: 'floor of a negative', expr: 'floor(a)', a: -1.5 },
  { label: 'ceil of a negative', expr: 'ceil(a)', a: -1.5 },
  { label: 'ceil inside a power', expr: 'ceil(a)^2', a: -1.5 },
  { label: 'round half away from zero', expr: 'round(a)', a: -2.5 },
  { label: 'round to digits', expr: 'round(a, 2)', a: 1.005 },
  { label: 'logarithms', expr: 'log(a, 2) + log(a) + log10(a)', a: 8 },
  { label: 'exp, sqrt, abs, pow', expr: 'exp(a) + sqrt(b) + abs(c) + pow(b, 0.5)', a: 1, b: 2, c: -3 },
  { label: 'sqrt of a negative', expr: 'sqrt(a)', a: -1 },
  { label: 'log of zero', expr: 'log(a)', a: 0 },
  { label: 'min, max', expr: 'min(a, b, c) + max(a, b, c)', a: 3, b: -1, c: 2 },
  { label: 'min with an empty argument', expr: 'min(a, b)', a: 3, b: null },
  { label: 'pi', expr: 'pi * a^2', a: 2 },
  { label: 'bool result', expr: 'a > b', a: 2, b: 1 },
  { label: 'bool in arithmetic', expr: '(a > b) * 10 + 1', a: 2, b: 1 },
  // Matrix spike of REFERENCES.md §2 (constructed, computed): Cu = 4.2, Cs = 22.6, Cn = 20 → 92.00 %.
  { label: 'native sample', a: 4.2 },
  { label: 'recovery with its parent', expr: 'recovery_pct(a, b, parent(a))', a: 22.6, b: 20, parent: 'native sample' },
  { label: 'empty parent', a: null },
  { label: 'recovery with an empty parent', expr: 'recovery_pct(a, b, parent(a))', a: 22.6, b: 20, parent: 'empty parent' },
  { label: 'recovery with no parent row', expr: 'recovery_pct(a, b, parent(a))', a: 22.6, b: 20 },
  // MS 22.6 / MSD 24.1 → RPD 6.424 % (REFERENCES.md §2, constructed, computed).
  { label: 'matrix spike', a: 22.6 },
  { label: 'rpd with its parent', expr: 'rpd_pct(a, parent(a))', a: 24.1, parent: 'matrix spike' },
  { label: 'D, acid written HA', expr: 'distribution_ratio(a, b, c, s)', a: 3, b: 3, c: 5, s: 'HA' },
  { label: 'D, base written " B "', expr: 'distribution_ratio(a, b, c, s)', a: 3, b: 10, c: 9, s: ' B ' },
  { label: 'D, neutral with no pH', expr: 'distribution_ratio(a, b, c, s)', a: 3, b: null, c: null, s: null },
  { label: 'D, acid with no pH', expr: 'distribution_ratio(a, b, c, s)', a: 3, b: null, c: 5, s: 'acid' },
  { label: 'D, no K', expr: 'distribution_ratio(a, b, c, s)', a: null, b: 3, c: 5, s: 'acid' },
  { label: 'D, unknown word', expr: 'distribution_ratio(a, b, c, s)', a: 3, b: 3, c: 5, s: 'zwitterion' },
  { label: 'D, constant word', expr: 'distribution_ratio(a, b, c, "base")', a: 3, b: 8, c: 9 },
  { label: 'E, empty D', expr: 'extraction_efficiency(a, b, c, d)', a: null, b: 100, c: 100, d: 1 },
  { label: 'E, empty D and volume', expr: 'extraction_efficiency(a, b, c, d)', a: null, b: null, c: 100, d: 1 },
  { label: 'E, empty volume', expr: 'extraction_efficiency(a, b, c, d)', a: 3, b: null, c: 100, d: 1 },
  { label: 'E, computed D', expr: 'extraction_efficiency(a * 2, b, c, d)', a: 1.5, b: 100, c: 500, d: 1 },
  { label: 'E, computed D empty', expr: 'extraction_efficiency(a * 2, b, c, d)', a: null, b: 100, c: 500, d: 1 },
];

const caseRow = (label: string): number => CASES.findIndex((c) => c.label === label) + 2;
const caseCell = (symbol: string, row: number): string => `${colLetter(CASE_COLUMNS.indexOf(symbol as never))}${row}`;

function caseValues(c: Case | undefined, usesAcidBase: boolean): Record<string, Value> {
  const num = (v: number | null | undefined): number => (v === null || v === undefined ? NaN : v);
  const raw = c?.s ?? '';
  // The engine hands formulas normalised text: acid_base through parseAcidBase, codes lower-cased and trimmed.
  const s = usesAcidBase ? (parseAcidBase(raw) ?? raw.trim().toLowerCase()) : raw.trim().toLowerCase();
  return { a: num(c?.a), b: num(c?.b), c: num(c?.c), d: num(c?.d), s };
}

// ---- a worklist with the DESIGN.md §4 formula chain ------------------------------------------------

const INPUT_FIELDS = [
  'sample_id',
  'sample_type',
  'parent_id',
  'extract_conc',
  'sample_volume',
  'solvent_volume',
  'extractions',
  'final_volume',
  'dilution',
  'partition_coeff',
  'ph',
  'pka',
  'acid_base',
  'spike_conc',
] as const;
const TEXT_FIELDS = new Set(['sample_id', 'sample_type', 'parent_id', 'acid_base']);
const FORMULAS: [string, string][] = [
  ['distribution_ratio', 'distribution_ratio(partition_coeff, ph, pka, acid_base)'],
  ['extraction_efficiency_pct', 'extraction_efficiency(distribution_ratio, sample_volume, solvent_volume, extractions) * 100'],
  ['pre_extraction_conc', 'extract_conc * dilution * final_volume / (sample_volume * extraction_efficiency_pct / 100)'],
  [
    'spike_recovery_pct',
    'sample_type == "ms" or sample_type == "msd" ? recovery_pct(pre_extraction_conc, spike_conc, parent(pre_extraction_conc)) : recovery_pct(pre_extraction_conc, spike_conc, 0)',
  ],
  ['rpd_pct', 'rpd_pct(pre_extraction_conc, pair(pre_extraction_conc))'],
];
const WORKLIST_COLUMNS = [...INPUT_FIELDS, ...FORMULAS.map(([name]) => name)];

type WorklistRow = Partial<Record<(typeof INPUT_FIELDS)[number], string | number>>;
const WORKLIST: WorklistRow[] = [
  // E1 (Harris, extraction-efficiency example; REFERENCES.md §1): K = 3, V_aq = 100 mL.
  { sample_id: 'E1a', sample_type: 'sample', extract_conc: 5, sample_volume: 100, solvent_volume: 500, extractions: 1, final_volume: 500, dilution: 1, partition_coeff: 3 },
  { sample_id: 'E1b', sample_type: 'sample', extract_conc: 5, sample_volume: 100, solvent_volume: 100, extractions: 5, final_volume: 500, dilution: 1, partition_coeff: 3 },
  // E4 (Harvey §7.7 weak acid): Ka = 1.00e-5 (pKa 5), K_D = 3.00, 50 mL + 50 mL.
  { sample_id: 'E4-pH3', sample_type: 'sample', extract_conc: 2, sample_volume: 50, solvent_volume: 50, extractions: 1, final_volume: 50, dilution: 2, partition_coeff: 3, ph: 3, pka: 5, acid_base: ' Acid ' },
  { sample_id: 'E4-pH5', sample_type: 'sample', extract_conc: 2, sample_volume: 50, solvent_volume: 50, extractions: 1, final_volume: 50, dilution: 2, partition_coeff: 3, ph: 5, pka: 5, acid_base: 'acid' },
  // E5 (Harris amine example): K = 3.0, Ka(BH+) = 1.0e-9 (pKa 9), 50 mL aq, 100 mL solvent.
  { sample_id: 'E5-pH10', sample_type: 'sample', extract_conc: 1, sample_volume: 50, solvent_volume: 100, extractions: 1, final_volume: 100, dilution: 1, partition_coeff: 3, ph: 10, pka: 9, acid_base: 'base' },
  { sample_id: 'E5-pH8', sample_type: 'sample', extract_conc: 1, sample_volume: 50, solvent_volume: 100, extractions: 1, final_volume: 100, dilution: 1, partition_coeff: 3, ph: 8, pka: 9, acid_base: 'BASE' },
  { sample_id: 'E1a-D', sample_type: 'dup', parent_id: 'E1a', extract_conc: 5.2, sample_volume: 100, solvent_volume: 500, extractions: 1, final_volume: 500, dilution: 1, partition_coeff: 3 },
  // REFERENCES.md §2 constructed MS/MSD (computed): Cu 4.2, Cs 22.6 / 24.1, Cn 20; no K, so E = 1.
  { sample_id: 'NAT-1', sample_type: 'sample', extract_conc: 4.2, sample_volume: 1, solvent_volume: 1, extractions: 1, final_volume: 1, dilution: 1 },
  { sample_id: 'NAT-1-MS', sample_type: 'MS ', parent_id: 'NAT-1', extract_conc: 22.6, sample_volume: 1, solvent_volume: 1, extractions: 1, final_volume: 1, dilution: 1, spike_conc: 20 },
  { sample_id: 'NAT-1-MSD', sample_type: 'msd', parent_id: 'NAT-1', extract_conc: 24.1, sample_volume: 1, solvent_volume: 1, extractions: 1, final_volume: 1, dilution: 1, spike_conc: 20 },
  { sample_id: 'LCS-1', sample_type: 'lcs', extract_conc: 9.6, sample_volume: 1, solvent_volume: 1, extractions: 1, final_volume: 1, dilution: 1, spike_conc: 10 },
  { sample_id: 'EMPTY-1', sample_type: 'sample', sample_volume: 1, solvent_volume: 1, extractions: 1, final_volume: 1, dilution: 1 },
  { sample_id: 'ZEROVOL', sample_type: 'sample', extract_conc: 1, sample_volume: 0, solvent_volume: 1, extractions: 1, final_volume: 1, dilution: 1 },
  { sample_id: 'NAT-9-MSD', sample_type: 'msd', parent_id: 'NAT-9', extract_conc: 3, sample_volume: 1, solvent_volume: 1, extractions: 1, final_volume: 1, dilution: 1, spike_conc: 20 },
];

const norm = (v: unknown): string => String(v ?? '').trim().toLowerCase();
function parentIndex(i: number): number | undefined {
  const id = WORKLIST[i].parent_id;
  if (id === undefined) return undefined;
  const j = WORKLIST.findIndex((r) => r.sample_id === id);
  return j < 0 ? undefined : j;
}
/** msd → the ms of the same parent; lcsd → its lcs; dup → its parent (DESIGN.md §4). */
function pairIndex(i: number): number | undefined {
  const type = norm(WORKLIST[i].sample_type);
  if (type === 'dup' || type === 'lcsd') return parentIndex(i);
  if (type !== 'msd') return undefined;
  const j = WORKLIST.findIndex((r) => norm(r.sample_type) === 'ms' && r.parent_id === WORKLIST[i].parent_id);
  return j < 0 ? undefined : j;
}
const worklistCell = (field: string, i: number): string => `${colLetter(WORKLIST_COLUMNS.indexOf(field))}${i + 2}`;

/** Engine view of the worklist, column by column (a cross-row look-up reads a finished column). */
function worklistReference(): Record<string, Value>[] {
  const rows = WORKLIST.map((r) => {
    const values: Record<string, Value> = {};
    for (const f of INPUT_FIELDS) {
      const v = r[f];
      if (TEXT_FIELDS.has(f)) values[f] = f === 'acid_base' ? (parseAcidBase(String(v ?? '')) ?? norm(v)) : norm(v);
      else values[f] = typeof v === 'number' ? v : NaN;
    }
    return values;
  });
  for (const [name, expr] of FORMULAS) {
    rows.forEach((row, i) => {
      const value = reference(expr, row, (fn, symbol) => {
        const j = fn === 'parent' ? parentIndex(i) : pairIndex(i);
        return j === undefined ? undefined : rows[j][symbol];
      });
      row[name] = value === '' ? NaN : value;
    });
  }
  return rows;
}

// ---- workbook --------------------------------------------------------------------------------------

function colLetter(i: number): string {
  if (i < 0 || i >= 26) throw new Error(`column index ${i} out of range`);
  return String.fromCharCode(65 + i);
}

const STALE = -987654.321;

interface FormulaCell {
  sheet: string;
  address: string;
  label: string;
  formula: string;
  expected: Expected;
}

function translate(expr: string, ctx: SheetFormulaContext): string {
  const result = toSheetFormula(math.parse(expr), ctx);
  if ('unsupported' in result) throw new Error(`"${expr}" could not be translated: ${result.unsupported}`);
  return result.formula;
}

function buildCases(): FormulaCell[] {
  const cells: FormulaCell[] = [];
  CASES.forEach((c, i) => {
    if (!c.expr) return;
    const row = i + 2;
    const ctx: SheetFormulaContext = {
      cellOf: (s) => (['a', 'b', 'c', 'd', 's'].includes(s) ? caseCell(s, row) : undefined),
      crossRowCellOf: (_fn, s) => (c.parent ? caseCell(s, caseRow(c.parent)) : undefined),
      isText: (s) => s === 's',
    };
    const usesAcidBase = c.expr.includes('distribution_ratio');
    const parent = c.parent ? CASES.find((p) => p.label === c.parent) : undefined;
    const expected = reference(c.expr, caseValues(c, usesAcidBase), (_fn, s) =>
      parent ? caseValues(parent, usesAcidBase)[s] : undefined,
    );
    cells.push({ sheet: 'Cases', address: caseCell('result', row), label: `${c.label}: ${c.expr}`, formula: translate(c.expr, ctx), expected });
  });
  return cells;
}

function buildWorklist(): FormulaCell[] {
  const ref = worklistReference();
  const cells: FormulaCell[] = [];
  WORKLIST.forEach((r, i) => {
    const ctx: SheetFormulaContext = {
      cellOf: (s) => (WORKLIST_COLUMNS.includes(s) ? worklistCell(s, i) : undefined),
      crossRowCellOf: (fn, s) => {
        const j = fn === 'parent' ? parentIndex(i) : pairIndex(i);
        return j === undefined ? undefined : worklistCell(s, j);
      },
      isText: (s) => TEXT_FIELDS.has(s),
    };
    for (const [name, expr] of FORMULAS) {
      const v = ref[i][name] as number;
      cells.push({
        sheet: 'Worklist',
        address: worklistCell(name, i),
        label: `${r.sample_id} ${name}`,
        formula: translate(expr, ctx),
        expected: Number.isFinite(v) ? v : '',
      });
    }
  });
  return cells;
}

const CASE_CELLS = buildCases();
const WORKLIST_CELLS = buildWorklist();
const stale = (sheet: string): string => `${sheet} stale`;

async function writeWorkbook(path: string): Promise<void> {
  const wb = new ExcelJS.Workbook();
  for (const cached of ['engine', 'stale'] as const) {
    const suffix = cached === 'stale' ? ' stale' : '';
    const cases = wb.addWorksheet(`Cases${suffix}`);
    cases.addRow([...CASE_COLUMNS]);
    CASES.forEach((c, i) => {
      const row = i + 2;
      cases.getCell(`A${row}`).value = c.label;
      for (const s of ['a', 'b', 'c', 'd', 's'] as const) {
        const v = c[s];
        if (v !== null && v !== undefined) cases.getCell(caseCell(s, row)).value = v;
      }
    });
    const worklist = wb.addWorksheet(`Worklist${suffix}`);
    worklist.addRow(WORKLIST_COLUMNS);
    WORKLIST.forEach((r, i) => {
      for (const f of INPUT_FIELDS) {
        const v = r[f];
        if (v !== undefined) worklist.getCell(worklistCell(f, i)).value = v;
      }
    });
    for (const cell of [...CASE_CELLS, ...WORKLIST_CELLS]) {
      const ws = cell.sheet === 'Cases' ? cases : worklist;
      // The writer caches the engine's value; the stale copy caches a wrong one, so only a real
      // recalculation can bring it to the reference.
      ws.getCell(cell.address).value = { formula: cell.formula, result: cached === 'engine' ? cell.expected : STALE };
    }
  }
  await wb.xlsx.writeFile(path);
}

type ReadBack = Map<string, unknown>;
async function readBack(path: string): Promise<ReadBack> {
  const wb = new ExcelJS.Workbook();
  await wb.xlsx.readFile(path);
  const out: ReadBack = new Map();
  for (const cell of [...CASE_CELLS, ...WORKLIST_CELLS]) {
    for (const sheet of [cell.sheet, stale(cell.sheet)]) {
      const c = wb.getWorksheet(sheet)?.getCell(cell.address);
      // exceljs reads an empty-text result ("") as no result at all.
      out.set(`${sheet}!${cell.address}`, c?.result ?? '');
    }
  }
  return out;
}

/** Relative agreement to 1e-9 (1e-12 absolute near zero); "" only matches "". */
function expectSame(actual: unknown, expected: Expected, label: string): void {
  if (expected === '') {
    expect(actual, label).toBe('');
    return;
  }
  expect(typeof actual, `${label}: got ${JSON.stringify(actual)}`).toBe('number');
  expect(Math.abs((actual as number) - expected), `${label}: got ${String(actual)}, want ${expected}`).toBeLessThanOrEqual(
    1e-9 * Math.abs(expected) + 1e-12,
  );
}

// ---- tests ---------------------------------------------------------------------------------------

const available = isLibreOfficeAvailable();

describe.skipIf(skipWithout('LibreOffice', available))('translated formulas recalculated by LibreOffice', () => {
  let dir: string;
  let values: ReadBack;

  beforeAll(async () => {
    dir = mkdtempSync(join(tmpdir(), 'phasebook-sheet-formula-'));
    const source = join(dir, 'formulas.xlsx');
    await writeWorkbook(source);
    const recalculated = await recalcWithLibreOffice(source);
    values = await readBack(recalculated);
    rmSync(dirname(recalculated), { recursive: true, force: true });
  });

  afterAll(async () => {
    if (dir) rmSync(dir, { recursive: true, force: true });
    await disposeLibreOfficeProfile();
  });

  it('recalculates on load: every deliberately wrong cached result is replaced', () => {
    const cells = [...CASE_CELLS, ...WORKLIST_CELLS];
    const stillStale = cells.filter((c) => values.get(`${stale(c.sheet)}!${c.address}`) === STALE);
    expect(stillStale.map((c) => c.label)).toEqual([]);
    expect(cells.length).toBeGreaterThan(100);
  });

  it.each(CASE_CELLS.map((c) => [c.label, c] as const))('%s', (_label, cell) => {
    expectSame(values.get(`Cases!${cell.address}`), cell.expected, cell.label);
    expectSame(values.get(`${stale('Cases')}!${cell.address}`), cell.expected, `${cell.label} (stale copy)`);
  });

  it.each(WORKLIST_CELLS.map((c) => [c.label, c] as const))('worklist %s', (_label, cell) => {
    expectSame(values.get(`Worklist!${cell.address}`), cell.expected, cell.label);
    expectSame(values.get(`${stale('Worklist')}!${cell.address}`), cell.expected, `${cell.label} (stale copy)`);
  });

  const row = (id: string): number => WORKLIST.findIndex((r) => r.sample_id === id);
  const sheetValue = (id: string, field: string): number => {
    const v = values.get(`${stale('Worklist')}!${worklistCell(field, row(id))}`);
    if (typeof v !== 'number') throw new Error(`${id} ${field}: expected a number, got ${JSON.stringify(v)}`);
    return v;
  };

  it.each([
    // E1 Harris extraction-efficiency example (statement + answers: justaaa.com/chemistry/321415):
    // (a) one 500 mL portion 93.8 % (exact 93.75 %); (b) five 100 mL portions 99.90 % (exact 99.902 %).
    ['E1a', 'extraction_efficiency_pct', 93.8, 0.05, 93.75],
    ['E1b', 'extraction_efficiency_pct', 99.9, 0.005, 99.90234375],
    // E4 Harvey, Analytical Chemistry 2.0 §7.7 weak acid: pH 3.00 → 74.8 %, pH 5.00 → 60 % (exact 74.81 %, 60.00 %).
    ['E4-pH3', 'extraction_efficiency_pct', 74.8, 0.05, (1 - 50 / (50 + (3 / (1 + 10 ** -2)) * 50)) * 100],
    ['E4-pH5', 'extraction_efficiency_pct', 60, 0.5, 60],
    // E5 Harris amine example (numbers from memory): D = 2.73 at pH 10.00, 0.273 at pH 8.00 (exact 2.7273, 0.27273).
    ['E5-pH10', 'distribution_ratio', 2.73, 0.005, 3 / 1.1],
    ['E5-pH8', 'distribution_ratio', 0.273, 0.0005, 3 / 11],
    // REFERENCES.md §2 constructed MS/MSD (computed): %R 92.00 and 99.50, RPD on concentrations 6.424 %.
    ['NAT-1-MS', 'spike_recovery_pct', 92, 1e-9, 92],
    ['NAT-1-MSD', 'spike_recovery_pct', 99.5, 1e-9, 99.5],
    ['NAT-1-MSD', 'rpd_pct', 6.424, 0.0005, (200 * 1.5) / 46.7],
  ])('%s %s agrees with the published %s', (id, field, published, rounding, exact) => {
    const v = sheetValue(id, field);
    expect(Math.abs(v - published)).toBeLessThanOrEqual(rounding);
    expect(Math.abs(v - exact)).toBeLessThanOrEqual(1e-9 * Math.abs(exact));
  });

  it('E5: the aqueous concentration left after one extraction matches the published values', () => {
    // Harris amine example (numbers from memory): 0.010 M, 50 mL aq, 100 mL solvent:
    // C_aq = 0.0015 M at pH 10.00, 0.0065 M at pH 8.00 (exact 1.549e-3, 6.471e-3).
    const cAq = (id: string) => 0.01 * (1 - sheetValue(id, 'extraction_efficiency_pct') / 100);
    expect(cAq('E5-pH10')).toBeCloseTo(0.0015, 4);
    expect(cAq('E5-pH8')).toBeCloseTo(0.0065, 4);
  });
});
