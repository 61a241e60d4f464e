/**
 * The registry of the method's functions (src/formula-functions.ts, issue 17 point 2): the engine
 * evaluates each function and the workbook writes it as a spreadsheet formula from the same entry.
 * Here every function, on a table of inputs (empty ones included), gives the same value in the
 * engine and in LibreOffice recalculating its spreadsheet form, and that value is the expected one,
 * whose source is named beside it. Argument counts are refused alike on both sides.
 */
import ExcelJS from 'exceljs';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { compileFormula, FormulaError, type SymbolKind } from '../../src/engine/formula.js';
import { FORMULA_FUNCTIONS } from '../../src/formula-functions.js';
import { toSheetFormula, type SheetFormulaContext } from '../../src/write/sheet-formula.js';
import { disposeLibreOfficeProfile, isLibreOfficeAvailable, recalcWithLibreOffice } from '../helpers/libreoffice.js';
import { skipWithout } from '../helpers/tools.js';

/** An argument: a number, null for an empty cell, or a text (the acid_base argument). */
type Arg = number | null | string;
interface Case {
  fn: string;
  args: Arg[];
  /** parent()/pair(): the linked row's value of `a` (null: empty); undefined: no linked row. */
  linked?: number | null;
  expected: number | '';
  /** Where the expected value comes from. */
  source: string;
}

const NUMBER_SYMBOLS = ['a', 'b', 'c', 'd'];
const SYMBOLS = new Map<string, SymbolKind>([...NUMBER_SYMBOLS.map((s) => [s, 'number'] as [string, SymbolKind]), ['w', 'text']]);
const HARRIS = 'Harris, Quantitative Chemical Analysis, extraction example (K 3, 100 mL water; as E1 in tests/write/sheet-formula-libreoffice.test.ts)';
const HARVEY = 'Harvey, Analytical Chemistry 2.0 §7.7 (weak acid, pKa 5, K_D 3)';
const AMINE = 'Harris amine example (K 3, pKa of BH+ 9; numbers from memory)';
const EMPTY_RULE = 'the engine\'s rule for empty cells (DESIGN.md: an empty input leaves the result empty)';

/** Cases written out; every function with the `any` rule gets one more per argument, that argument empty (below). */
const WRITTEN: Case[] = [
  { fn: 'abs', args: [-2.5], expected: 2.5, source: 'common practice' },
  { fn: 'sqrt', args: [2.25], expected: 1.5, source: 'common practice' },
  { fn: 'exp', args: [1], expected: Math.E, source: 'e = 2.718281828… (from memory)' },
  { fn: 'log', args: [8, 2], expected: 3, source: 'common practice: 2³ = 8' },
  { fn: 'log', args: [Math.E ** 2], expected: 2, source: 'natural logarithm, common practice' },
  { fn: 'log10', args: [1000], expected: 3, source: 'common practice' },
  { fn: 'pow', args: [2, 10], expected: 1024, source: 'common practice' },
  { fn: 'pow', args: [null, 0], expected: '', source: `${EMPTY_RULE}, though x⁰ is 1 for any number` },
  { fn: 'min', args: [3, -1, 2], expected: -1, source: 'common practice' },
  { fn: 'max', args: [3, -1, 2], expected: 3, source: 'common practice' },
  { fn: 'round', args: [-2.5], expected: -3, source: 'half away from zero, as a spreadsheet ROUND (common practice)' },
  { fn: 'round', args: [1.25, 1], expected: 1.3, source: 'half away from zero, as a spreadsheet ROUND (common practice)' },
  { fn: 'floor', args: [-1.5], expected: -2, source: 'towards −∞ (common practice)' },
  { fn: 'ceil', args: [-1.5], expected: -1, source: 'towards +∞ (common practice)' },
  { fn: 'if_empty', args: [2, 7], expected: 2, source: 'README, "The method file": the value unless it is empty' },
  { fn: 'if_empty', args: [null, 7], expected: 7, source: 'README, "The method file": the fallback for an empty value' },
  { fn: 'if_empty', args: [null, null], expected: '', source: 'README, "The method file": both empty' },
  { fn: 'distribution_ratio', args: [3, 3, 5, 'acid'], expected: 3 / (1 + 10 ** (3 - 5)), source: `${HARVEY}: D = K/(1+10^(pH−pKa)) at pH 3` },
  { fn: 'distribution_ratio', args: [3, 10, 9, ' Base '], expected: 3 / 1.1, source: `${AMINE}: D = 2.73 at pH 10` },
  { fn: 'distribution_ratio', args: [3, null, null, 'neutral'], expected: 3, source: 'D = K for a neutral analyte (Harvey §7.7); no pH needed' },
  { fn: 'distribution_ratio', args: [3, null, 5, 'acid'], expected: '', source: `${HARVEY}: an acid's D needs the pH` },
  { fn: 'distribution_ratio', args: [null, 3, 5, 'acid'], expected: '', source: `${EMPTY_RULE}: no K` },
  { fn: 'distribution_ratio', args: [3, 3, 5, 'zwitterion'], expected: '', source: 'neither acid, base nor neutral (src/chemistry/partition.ts words): no D' },
  { fn: 'extraction_efficiency', args: [3, 100, 500, 1], expected: 0.9375, source: `${HARRIS}: one 500 mL portion, 93.75 %` },
  { fn: 'extraction_efficiency', args: [3, 100, 100, 5], expected: 1 - 0.25 ** 5, source: `${HARRIS}: five 100 mL portions, 99.90 %` },
  { fn: 'extraction_efficiency', args: [null, 100, 100, 1], expected: 1, source: 'README, "Canonical fields": E = 100 % when no K is given' },
  { fn: 'extraction_efficiency', args: [null, null, 100, 1], expected: 1, source: 'README, "Canonical fields": E = 100 % when no K is given, whatever else is empty' },
  { fn: 'extraction_efficiency', args: [3, null, 100, 1], expected: '', source: `${EMPTY_RULE}: a K but no sample volume` },
  { fn: 'recovery_pct', args: [22.6, 20, 4.2], expected: 92, source: 'REFERENCES.md §2 constructed matrix spike: (22.6 − 4.2)/20 × 100 = 92.00 %' },
  { fn: 'rpd_pct', args: [24.1, 22.6], expected: (1.5 / 23.35) * 100, source: 'REFERENCES.md §2 constructed MS/MSD: RPD 6.424 %' },
  { fn: 'parent', args: ['a'], linked: 4.2, expected: 4.2, source: "the parent row's own value (DESIGN.md §4), no arithmetic" },
  { fn: 'parent', args: ['a'], linked: null, expected: '', source: "the parent row's value is empty" },
  { fn: 'parent', args: ['a'], expected: '', source: 'no parent row: empty (README, "The method file")' },
  { fn: 'pair', args: ['a'], linked: 22.6, expected: 22.6, source: "the paired row's own value (DESIGN.md §4), no arithmetic" },
  { fn: 'pair', args: ['a'], expected: '', source: 'no paired row: empty (README, "The method file")' },
];

/** For each function whose rule is `any`, its first written case with each argument in turn empty. */
const EMPTIED: Case[] = Object.entries(FORMULA_FUNCTIONS)
  .filter(([, spec]) => spec.empty.kind === 'any' && !spec.crossRow)
  .flatMap(([fn]) => {
    const full = WRITTEN.find((c) => c.fn === fn && c.expected !== '');
    if (!full) return [];
    return full.args.map((_, i) => ({ fn, args: full.args.map((a, j) => (j === i ? null : a)), expected: '' as const, source: EMPTY_RULE }));
  });

const CASES = [...WRITTEN, ...EMPTIED];

/** The formula a case calls: numbers as a, b, c, d by position, a text as w, a column name as itself. */
function exprOf(c: Case): string {
  if (FORMULA_FUNCTIONS[c.fn]!.crossRow) return `${c.fn}(${String(c.args[0])})`;
  return `${c.fn}(${c.args.map((a, i) => (typeof a === 'string' ? 'w' : NUMBER_SYMBOLS[i])).join(', ')})`;
}

/** The engine's value for a case (empty as ""), one row, its linked row (if any) row 1. */
function engineValue(c: Case): number | '' {
  const numbers = new Map<string, Float64Array>();
  const linked = c.linked === undefined ? undefined : c.linked === null ? NaN : c.linked;
  NUMBER_SYMBOLS.forEach((s, i) => {
    const a = FORMULA_FUNCTIONS[c.fn]!.crossRow ? NaN : c.args[i];
    numbers.set(s, Float64Array.from([typeof a === 'number' ? a : NaN, s === 'a' && linked !== undefined ? linked : NaN]));
  });
  const w = c.args.find((a): a is string => typeof a === 'string') ?? '';
  const link = Int32Array.from([linked === undefined ? -1 : 1, -1]);
  const row = compileFormula({ name: 'x', expr: exprOf(c) }, SYMBOLS).bind({
    number: (name) => numbers.get(name),
    text: (name) => (name === 'w' ? [w, ''] : undefined),
    parentRow: link,
    pairRow: link,
  });
  const v = row(0);
  if (typeof v !== 'number') throw new Error(`${exprOf(c)} gave text ${JSON.stringify(v)}`);
  return Number.isFinite(v) ? v : '';
}

// ---- the spreadsheet side: one row per case, a linked row after all of them ------------------------

const COLUMNS = ['label', 'a', 'b', 'c', 'd', 'w', 'result'];
const col = (name: string) => String.fromCharCode(65 + COLUMNS.indexOf(name));
const caseRow = (i: number) => i + 2;
const linkedRow = (i: number) => CASES.length + 2 + i;

function sheetFormula(c: Case, i: number): string {
  const compiled = compileFormula({ name: 'x', expr: exprOf(c) }, SYMBOLS);
  const ctx: SheetFormulaContext = {
    cellOf: (s) => (COLUMNS.includes(s) && s !== 'label' && s !== 'result' ? `${col(s)}${caseRow(i)}` : undefined),
    crossRowCellOf: (_fn, s) => (c.linked === undefined ? undefined : `${col(s)}${linkedRow(i)}`),
    isText: (s) => s === 'w',
  };
  const result = toSheetFormula(compiled.node, ctx);
  if ('unsupported' in result) throw new Error(`${exprOf(c)}: ${result.unsupported}`);
  return result.formula;
}

const label = (c: Case) => `${exprOf(c)} with ${JSON.stringify(c.args)}${c.linked === undefined ? '' : `, linked ${String(c.linked)}`}`;
const STALE = -987654.321;

async function writeCases(path: string): Promise<void> {
  const wb = new ExcelJS.Workbook();
  const ws = wb.addWorksheet('Cases');
  ws.addRow(COLUMNS);
  CASES.forEach((c, i) => {
    ws.getCell(`A${caseRow(i)}`).value = label(c);
    if (!FORMULA_FUNCTIONS[c.fn]!.crossRow) {
      c.args.forEach((a, j) => {
        if (a !== null) ws.getCell(`${col(typeof a === 'string' ? 'w' : NUMBER_SYMBOLS[j]!)}${caseRow(i)}`).value = a;
      });
    }
    if (typeof c.linked === 'number') ws.getCell(`${col('a')}${linkedRow(i)}`).value = c.linked;
    // A wrong cached result: only a real recalculation brings the cell to the expected value.
    ws.getCell(`${col('result')}${caseRow(i)}`).value = { formula: sheetFormula(c, i), result: STALE };
  });
  await wb.xlsx.writeFile(path);
}

function expectValue(actual: unknown, expected: number | '', what: string): void {
  if (expected === '') {
    expect(actual, what).toBe('');
    return;
  }
  expect(typeof actual, `${what}: got ${JSON.stringify(actual)}`).toBe('number');
  expect(Math.abs((actual as number) - expected), `${what}: got ${String(actual)}, want ${expected}`).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(expected)));
}

describe('every function of the registry', () => {
  it('has written cases, and a spreadsheet form unless it is a cross-row look-up', () => {
    for (const [fn, spec] of Object.entries(FORMULA_FUNCTIONS)) {
      expect(WRITTEN.some((c) => c.fn === fn), fn).toBe(true);
      expect(spec.crossRow ? spec.evaluate === undefined && spec.sheet === undefined : spec.evaluate !== undefined && spec.sheet !== undefined, fn).toBe(true);
    }
    expect(EMPTIED.length).toBeGreaterThan(15);
  });

  it.each(CASES.map((c) => [label(c), c] as const))('the engine gives the expected value: %s', (_label, c) => {
    expectValue(engineValue(c), c.expected, c.source);
  });

  // Counts around each function's limits; a count is accepted or refused alike, in the same words.
  const counts = Object.entries(FORMULA_FUNCTIONS).flatMap(([fn, spec]) =>
    [...new Set([0, spec.args[0] - 1, spec.args[0], spec.args[1], spec.args[1] + 1])].filter((n) => n >= 0).map((n) => [fn, n] as const),
  );
  it.each(counts)('%s() with %i arguments: the engine and the spreadsheet form accept or refuse it alike', (fn, n) => {
    const expr = `${fn}(${Array.from({ length: n }, () => 'a').join(', ')})`;
    let engineError: string | undefined;
    let node;
    try {
      node = compileFormula({ name: 'x', expr }, SYMBOLS).node;
    } catch (err) {
      expect(err).toBeInstanceOf(FormulaError);
      engineError = (err as Error).message;
    }
    const spec = FORMULA_FUNCTIONS[fn]!;
    const accepted = n >= spec.args[0] && n <= spec.args[1];
    expect(engineError === undefined, `${expr}: ${engineError}`).toBe(accepted);
    if (!accepted) {
      expect(engineError).toMatch(new RegExp(`^${fn}\\(\\) takes ${spec.args[0] === spec.args[1] ? spec.args[0] : `${spec.args[0]} to ${spec.args[1]}`} arguments?, got ${n}$`));
      return;
    }
    const sheet = toSheetFormula(node!, { cellOf: (s) => (s === 'a' ? 'B2' : undefined), crossRowCellOf: () => 'B3' });
    expect('formula' in sheet, JSON.stringify(sheet)).toBe(true);
  });
});

const available = isLibreOfficeAvailable();

describe.skipIf(skipWithout('LibreOffice', available))('every function of the registry, as LibreOffice recalculates its spreadsheet form', () => {
  let dir: string;
  const values = new Map<number, unknown>();

  beforeAll(async () => {
    dir = mkdtempSync(join(tmpdir(), 'phasebook-functions-'));
    const source = join(dir, 'functions.xlsx');
    await writeCases(source);
    const recalculated = await recalcWithLibreOffice(source);
    const wb = new ExcelJS.Workbook();
    await wb.xlsx.readFile(recalculated);
    const ws = wb.getWorksheet('Cases')!;
    // exceljs reads an empty-text result ("") as no result at all.
    CASES.forEach((_c, i) => values.set(i, (ws.getCell(`${col('result')}${caseRow(i)}`).result as unknown) ?? ''));
    rmSync(dirname(recalculated), { recursive: true, force: true });
  }, 120_000);

  afterAll(async () => {
    if (dir) rmSync(dir, { recursive: true, force: true });
    await disposeLibreOfficeProfile();
  });

  it.each(CASES.map((c, i) => [label(c), c, i] as const))('%s: the same value as the engine', (_label, c, i) => {
    expectValue(values.get(i), c.expected, c.source);
    expectValue(values.get(i), engineValue(c), 'the engine');
  });
});
