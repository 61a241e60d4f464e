import { describe, it, expect } from 'vitest';
import { ConstantNode, OperatorNode, ParenthesisNode, SymbolNode, parse } from 'mathjs';
import type { MathNode } from 'mathjs';
import {
  ACID_WORDS,
  BASE_WORDS,
  NEUTRAL_WORDS,
  toSheetFormula,
  type SheetFormulaContext,
} from '../../src/write/sheet-formula.js';
import { parseAcidBase } from '../../src/chemistry/partition.js';

/** Row 2 of a results sheet; parent(x) lives in row 7, pair(x) in row 9 (when `withPair`). */
const COLUMNS: Record<string, string> = {
  a: 'A',
  b: 'B',
  c: 'C',
  partition_coeff: 'D',
  ph: 'E',
  pka: 'F',
  acid_base: 'G',
  sample_volume: 'H',
  solvent_volume: 'I',
  extractions: 'J',
  extract_conc: 'K',
  dilution: 'L',
  final_volume: 'M',
  spike_conc: 'N',
  sample_type: 'O',
  distribution_ratio: 'P',
  extraction_efficiency_pct: 'Q',
  pre_extraction_conc: 'R',
};

const column = (s: string): string | undefined => (Object.hasOwn(COLUMNS, s) ? COLUMNS[s] : undefined);

function context(options: { withPair: boolean; withParent: boolean }): SheetFormulaContext {
  return {
    cellOf: (s) => (column(s) ? `${column(s)}2` : s === 'rl' ? 'Method!$B$3' : undefined),
    crossRowCellOf: (fn, s) => {
      if (!column(s)) return undefined;
      if (fn === 'parent') return options.withParent ? `${column(s)}7` : undefined;
      return options.withPair ? `${column(s)}9` : undefined;
    },
  };
}
const full = context({ withPair: true, withParent: true });
const lonely = context({ withPair: false, withParent: false });

function formulaOf(expr: string | MathNode, ctx: SheetFormulaContext = full): string {
  const result = toSheetFormula(typeof expr === 'string' ? parse(expr) : expr, ctx);
  if ('unsupported' in result) throw new Error(`unexpected unsupported: ${result.unsupported}`);
  return result.formula;
}

describe('toSheetFormula: the method formulas of DESIGN.md §4', () => {
  it.each([
    [
      'distribution_ratio(partition_coeff, ph, pka, acid_base)',
      'IF(D2="","",IFERROR(IF(OR(LOWER(TRIM(G2))="acid",LOWER(TRIM(G2))="a",LOWER(TRIM(G2))="ha"),' +
        'IF(OR(E2="",F2=""),NA(),D2/(1+10^(E2-F2))),' +
        'IF(OR(LOWER(TRIM(G2))="base",LOWER(TRIM(G2))="b"),IF(OR(E2="",F2=""),NA(),D2/(1+10^(F2-E2))),' +
        'IF(OR(LOWER(TRIM(G2))="",LOWER(TRIM(G2))="neutral",LOWER(TRIM(G2))="n",LOWER(TRIM(G2))="none"),D2,NA()))),""))',
    ],
    [
      'extraction_efficiency(distribution_ratio, sample_volume, solvent_volume, extractions) * 100',
      'IFERROR(IF(P2="",1,IF(OR(H2="",I2="",J2=""),NA(),1-(H2/(H2+P2*I2))^J2))*100,"")',
    ],
    [
      'extract_conc * dilution * final_volume / (sample_volume * extraction_efficiency_pct / 100)',
      'IF(OR(K2="",L2="",M2="",H2="",Q2=""),"",IFERROR(K2*L2*M2/(H2*Q2/100),""))',
    ],
    [
      'sample_type == "ms" or sample_type == "msd" ? recovery_pct(pre_extraction_conc, spike_conc, parent(pre_extraction_conc)) : recovery_pct(pre_extraction_conc, spike_conc, 0)',
      'IF(OR(R2="",N2=""),"",IFERROR(IF(OR(LOWER(TRIM(O2))="ms",LOWER(TRIM(O2))="msd"),' +
        'IF(R7="",NA(),(R2-R7)/N2*100),(R2-0)/N2*100),""))',
    ],
    ['rpd_pct(pre_extraction_conc, pair(pre_extraction_conc))', 'IF(OR(R2="",R9=""),"",IFERROR(ABS(R2-R9)/((R2+R9)/2)*100,""))'],
  ])('%s', (expr, expected) => {
    expect(formulaOf(expr)).toBe(expected);
  });

  it('lists every cell a formula reads, each once', () => {
    const result = toSheetFormula(parse('rpd_pct(pre_extraction_conc, pair(pre_extraction_conc)) + pre_extraction_conc'), full);
    expect(result).toEqual({ formula: expect.any(String), cells: ['R2', 'R9'] });
  });
});

describe('toSheetFormula: precedence keeps the mathjs meaning', () => {
  it.each([
    // mathjs: unary minus is looser than ^ (−2^2 = −4); spreadsheets bind it tighter (−2^2 = 4).
    ['-2^2', 'IFERROR(-(2^2),"")'],
    // mathjs ^ is right-associative (2^3^2 = 512); spreadsheets go left to right (64).
    ['2^3^2', 'IFERROR(2^(3^2),"")'],
    ['2^-3^2', 'IFERROR(2^(-(3^2)),"")'],
    ['(-a)^2', 'IF(A2="","",IFERROR((-A2)^2,""))'],
    ['-a^2', 'IF(A2="","",IFERROR(-(A2^2),""))'],
    ['a^-b', 'IF(OR(A2="",B2=""),"",IFERROR(A2^(-B2),""))'],
    ['a/(b*c)', 'IF(OR(A2="",B2="",C2=""),"",IFERROR(A2/(B2*C2),""))'],
    ['a-(b-c)', 'IF(OR(A2="",B2="",C2=""),"",IFERROR(A2-(B2-C2),""))'],
    ['a - -b', 'IF(OR(A2="",B2=""),"",IFERROR(A2-(-B2),""))'],
    ['-a * b', 'IF(OR(A2="",B2=""),"",IFERROR(-A2*B2,""))'],
    ['2 a', 'IF(A2="","",IFERROR(2*A2,""))'],
    ['+a', 'IF(A2="","",IFERROR(A2,""))'],
  ])('%s → %s', (expr, expected) => {
    expect(formulaOf(expr)).toBe(expected);
  });

  // Trees built in code carry no ParenthesisNode: the printer must add what precedence needs.
  const sym = (n: string) => new SymbolNode(n);
  const op = (o: '+' | '-' | '*' | '/' | '^', fn: 'add' | 'subtract' | 'multiply' | 'divide' | 'pow', l: MathNode, r: MathNode) =>
    new OperatorNode(o, fn, [l, r]);
  const abc = (body: string) => `IF(OR(A2="",B2="",C2=""),"",IFERROR(${body},""))`;
  it.each([
    ['a/(b*c)', op('/', 'divide', sym('a'), op('*', 'multiply', sym('b'), sym('c'))), abc('A2/(B2*C2)')],
    ['a-(b-c)', op('-', 'subtract', sym('a'), op('-', 'subtract', sym('b'), sym('c'))), abc('A2-(B2-C2)')],
    ['(a-b)*c', op('*', 'multiply', op('-', 'subtract', sym('a'), sym('b')), sym('c')), abc('(A2-B2)*C2')],
    ['a-b-c', op('-', 'subtract', op('-', 'subtract', sym('a'), sym('b')), sym('c')), abc('A2-B2-C2')],
    ['(a^b)^c', op('^', 'pow', op('^', 'pow', sym('a'), sym('b')), sym('c')), abc('(A2^B2)^C2')],
    [
      '-(a+b)',
      new OperatorNode('-', 'unaryMinus', [op('+', 'add', sym('a'), sym('b'))]),
      'IF(OR(A2="",B2=""),"",IFERROR(-(A2+B2),""))',
    ],
    ['a*(-2)', op('*', 'multiply', sym('a'), new ConstantNode(-2)), 'IF(A2="","",IFERROR(A2*(-2),""))'],
  ])('%s built without parentheses', (_label, tree, expected) => {
    expect(formulaOf(tree)).toBe(expected);
  });

  it('keeps a parenthesis the author wrote even where it is not needed', () => {
    expect(formulaOf(new ParenthesisNode(new SymbolNode('a')))).toBe('IF(A2="","",IFERROR((A2),""))');
  });
});

describe('toSheetFormula: functions', () => {
  it.each([
    ['abs(a)', 'ABS(A2)'],
    ['sqrt(a)', 'SQRT(A2)'],
    ['exp(a)', 'EXP(A2)'],
    ['log(a)', 'LN(A2)'],
    ['log(a, 2)', 'LOG(A2,2)'],
    ['log10(a)', 'LOG10(A2)'],
    ['pow(a, 2)', 'POWER(A2,2)'],
    ['min(a, 2, 3)', 'MIN(A2,2,3)'],
    ['max(a, 2)', 'MAX(A2,2)'],
    ['round(a)', 'ROUND(A2,0)'],
    ['round(a, 3)', 'ROUND(A2,3)'],
    // floor(−1.5) = −2 and ceil(−1.5) = −1 in mathjs: INT rounds towards −∞ (common practice).
    ['floor(a)', 'INT(A2)'],
    ['ceil(a)', '-INT(-A2)'],
    ['ceil(a)^2', '(-INT(-A2))^2'],
    ['recovery_pct(a, 20, 4.2)', '(A2-4.2)/20*100'],
    ['rpd_pct(a, 24.1)', 'ABS(A2-24.1)/((A2+24.1)/2)*100'],
    ['a * 1e-9', 'A2*1E-9'],
    ['a * 2.5e21', 'A2*2.5E+21'],
    ['pi * a', 'PI()*A2'],
    ['e ^ a', 'EXP(1)^A2'],
  ])('%s', (expr, body) => {
    expect(formulaOf(expr)).toBe(`IF(A2="","",IFERROR(${body},""))`);
  });

  it.each([
    ['distribution_ratio(a, b, c, "acid")', 'IF(OR(A2="",B2="",C2=""),"",IFERROR(A2/(1+10^(B2-C2)),""))'],
    ['distribution_ratio(a, b, c, " Base ")', 'IF(OR(A2="",B2="",C2=""),"",IFERROR(A2/(1+10^(C2-B2)),""))'],
    // Neutral: pH and pKa play no part, so they are neither read nor required.
    ['distribution_ratio(a, b, c, "neutral")', 'IF(A2="","",IFERROR(A2,""))'],
    ['distribution_ratio(a, b, c, "")', 'IF(A2="","",IFERROR(A2,""))'],
    // A compound D is tested for being empty by whether it evaluates to an error.
    [
      'extraction_efficiency(a * b, c, 1, 2)',
      'IFERROR(IF(ISERROR(IF(OR(A2="",B2=""),NA(),A2*B2)),1,IF(C2="",NA(),1-(C2/(C2+A2*B2*1))^2)),"")',
    ],
    ['if_empty(a, 0) + b', 'IF(B2="","",IFERROR(IF(A2="",0,A2)+B2,""))'],
    ['if_empty(a / b, c)', 'IFERROR(IF(ISERROR(IF(OR(A2="",B2=""),NA(),A2/B2)),IF(C2="",NA(),C2),A2/B2),"")'],
    // a is guarded at the top already, so if_empty has nothing left to test.
    ['if_empty(a, b) * a', 'IF(A2="","",IFERROR(A2*A2,""))'],
    ['a / rl', 'IF(OR(A2="",Method!$B$3=""),"",IFERROR(A2/Method!$B$3,""))'],
  ])('%s', (expr, expected) => {
    expect(formulaOf(expr)).toBe(expected);
  });
});

describe('toSheetFormula: conditions, text and empty values', () => {
  it.each([
    // mathjs: NaN > 5 is false, so an empty a takes the else branch.
    ['a > 5 ? a : b', 'IFERROR(IF(IF(A2="",FALSE,A2>5),IF(A2="",NA(),A2),IF(B2="",NA(),B2)),"")'],
    ['a / b > 1 ? 1 : 2', 'IFERROR(IF(IF(OR(A2="",B2=""),FALSE,IFERROR(A2/B2>1,FALSE)),1,2),"")'],
    // A true/false result is stored as 1/0; NaN != b is true in mathjs.
    ['a != b', 'IF(IF(OR(A2="",B2=""),TRUE,A2<>B2),1,0)'],
    ['a == b', 'IF(IF(OR(A2="",B2=""),FALSE,A2=B2),1,0)'],
    ['not a', 'IF(NOT(IF(A2="",FALSE,A2<>0)),1,0)'],
    ['a < b and b <= c', 'IF(AND(IF(OR(A2="",B2=""),FALSE,A2<B2),IF(OR(B2="",C2=""),FALSE,B2<=C2)),1,0)'],
    ['(a > b) * 10', 'IFERROR(IF((IF(OR(A2="",B2=""),FALSE,A2>B2)),1,0)*10,"")'],
    ['sample_type == "ms"', 'IF(LOWER(TRIM(O2))="ms",1,0)'],
    // NaN is the engine's empty value: a branch that yields it is empty, like a look-up with no row.
    ['NaN', '""'],
    ['a > 5 ? a : NaN', 'IFERROR(IF(IF(A2="",FALSE,A2>5),IF(A2="",NA(),A2),NA()),"")'],
    ['"ms" != sample_type', 'IF("ms"<>LOWER(TRIM(O2)),1,0)'],
    // mathjs writes a quote inside text as \"; the sheet doubles it.
    ['sample_type == "say \\"hi\\""', 'IF(LOWER(TRIM(O2))="say ""hi""",1,0)'],
    // Without isText in the context, a field compared with another field is taken as a number.
    ['sample_type == parent(sample_type)', 'IF(IF(OR(O2="",O7=""),FALSE,O2=O7),1,0)'],
    ['sample_type ? 1 : 0', 'IFERROR(IF(IF(O2="",FALSE,O2<>0),1,0),"")'],
  ])('%s', (expr, expected) => {
    expect(formulaOf(expr)).toBe(expected);
  });

  const typed: SheetFormulaContext = { ...full, isText: (s) => s === 'sample_type' || s === 'acid_base' };
  it.each([
    ['sample_type == parent(sample_type)', 'IF(LOWER(TRIM(O2))=LOWER(TRIM(O7)),1,0)'],
    ['sample_type != pair(sample_type)', 'IF(LOWER(TRIM(O2))<>LOWER(TRIM(O9)),1,0)'],
    // mathjs truthiness of text: "" is false, anything else true.
    ['sample_type ? 1 : 0', 'IFERROR(IF(LOWER(TRIM(O2))<>"",1,0),"")'],
  ])('with text fields declared: %s', (expr, expected) => {
    expect(formulaOf(expr, typed)).toBe(expected);
  });

  it('with text fields declared, refuses a text field in arithmetic', () => {
    expect(toSheetFormula(parse('sample_type + 1'), typed)).toEqual({
      unsupported: '"sample_type" gives text where a number is needed',
    });
  });

  it.each([
    // No paired row: the engine leaves RPD empty, and so does the sheet.
    ['rpd_pct(pre_extraction_conc, pair(pre_extraction_conc))', '""'],
    ['recovery_pct(pre_extraction_conc, spike_conc, parent(pre_extraction_conc))', '""'],
    // Only the branch that needs the missing row becomes empty.
    [
      'sample_type == "ms" ? recovery_pct(pre_extraction_conc, spike_conc, parent(pre_extraction_conc)) : recovery_pct(pre_extraction_conc, spike_conc, 0)',
      'IF(OR(R2="",N2=""),"",IFERROR(IF(LOWER(TRIM(O2))="ms",NA(),(R2-0)/N2*100),""))',
    ],
    ['if_empty(parent(a), 0) + a', 'IF(A2="","",IFERROR(0+A2,""))'],
    ['extraction_efficiency(parent(a), b, c, 1)', 'IFERROR(1,"")'],
    ['parent(a) > 1 ? 1 : 2', 'IFERROR(IF(FALSE,1,2),"")'],
  ])('without the cross-row partner: %s', (expr, expected) => {
    expect(formulaOf(expr, lonely)).toBe(expected);
  });
});

describe('toSheetFormula: refusals', () => {
  it.each([
    ['mod(a, b)', 'the function "mod" has no spreadsheet translation'],
    ['a % b', 'the operator "%" has no spreadsheet translation'],
    ['a mod b', 'the operator "mod" has no spreadsheet translation'],
    ['x + 1', 'the symbol "x" has no cell in the sheet'],
    // The argument counts are the registry's (src/formula-functions.ts), worded as the engine words them.
    ['round(a, 1, 2)', 'round() takes 1 to 2 arguments, got 3'],
    ['sqrt()', 'sqrt() takes 1 argument, got 0'],
    ['recovery_pct(a, b)', 'recovery_pct() takes 3 arguments, got 2'],
    ['parent(a + 1)', '"parent" expects one column name, got "parent(a + 1)"'],
    ['sample_type < "ms"', '"sample_type < "ms"" orders text; only == and != compare text'],
    ['"ms" + 1', '""ms"" gives text where a number is needed'],
    ['"ms"', '""ms"" gives text; a formula column holds numbers'],
    ['distribution_ratio(a, b, c, "zwitterion")', 'the acid_base value "zwitterion" is not acid, base or neutral'],
    ['true + 1', 'the constant "true" is neither a number nor text'],
    // Names that exist on every JavaScript object are not functions or constants here.
    ['constructor(a)', 'the function "constructor" has no spreadsheet translation'],
    ['toString + 1', 'the symbol "toString" has no cell in the sheet'],
    ['a.b', '"a.b" (AccessorNode) is not allowed in a method formula'],
    ['x = 1', '"x = 1" (AssignmentNode) is not allowed in a method formula'],
    ['[1, 2]', '"[1, 2]" (ArrayNode) is not allowed in a method formula'],
    ['f(x) = x', '"f(x) = x" (FunctionAssignmentNode) is not allowed in a method formula'],
    ['a ? "x" : 1', '"a ? "x" : 1" gives text; a formula column holds numbers'],
    ['(a ? 1 : "x") + 1', '""x"" gives text where a number is needed'],
  ])('%s → %s', (expr, message) => {
    expect(toSheetFormula(parse(expr), full)).toEqual({ unsupported: message });
  });

  it('refuses a symbol with no cell even in a branch that would not be emitted', () => {
    expect(toSheetFormula(parse('if_empty(parent(a), nowhere)'), lonely)).toEqual({
      unsupported: 'the symbol "nowhere" has no cell in the sheet',
    });
  });

  it('refuses a formula above the 8,192-character limit', () => {
    const long = Array.from({ length: 40 }, () => 'distribution_ratio(partition_coeff, ph, pka, acid_base)').join(' + ');
    const result = toSheetFormula(parse(long), full);
    expect(result).toEqual({ unsupported: expect.stringMatching(/^the spreadsheet formula would be \d+ characters long, above the limit of 8192$/) });
  });

  it('refuses a text constant above 255 characters', () => {
    const result = toSheetFormula(parse(`sample_type == "${'x'.repeat(256)}"`), full);
    expect(result).toEqual({ unsupported: `the text constant "${'x'.repeat(20)}..." is longer than 255 characters` });
  });
});

describe('acid_base words agree with the engine (parseAcidBase)', () => {
  it.each([
    ...ACID_WORDS.map((w) => [w, 'acid'] as const),
    ...BASE_WORDS.map((w) => [w, 'base'] as const),
    ...NEUTRAL_WORDS.map((w) => [w, 'neutral'] as const),
  ])('"%s" is %s', (word, kind) => {
    expect(parseAcidBase(word)).toBe(kind);
    expect(parseAcidBase(` ${word.toUpperCase()} `)).toBe(kind);
  });
});
