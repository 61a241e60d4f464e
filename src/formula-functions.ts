/**
 * The functions a method's formulas may call: one entry per function, holding everything
 * phasebook knows of it (issue 17, point 2). The engine (engine/formula.ts) reads an entry to
 * check a call and compute it; the workbook writer (write/sheet-formula.ts) reads the same
 * entry to write the call as a live spreadsheet formula. So a function's argument count, its
 * value, its spreadsheet form and what it does with empty inputs are said once, here.
 *
 * An entry is:
 * - `args`: the fewest and the most arguments;
 * - `empty`: the rule for empty inputs (below), which the engine applies before `evaluate`
 *   and the spreadsheet form follows by testing those arguments' cells;
 * - `evaluate`: its value on the arguments' values (absent for a cross-row look-up, whose
 *   value is a cell of another row);
 * - `sheet`: its spreadsheet form, written with the translator's SheetKit (English function
 *   names; the kit keeps the empty-cell protection and the operator precedence right);
 * - `crossRow`: set for parent() and pair(), which take a column name, not a value.
 *
 * Empty: a number that is NaN, or a text that is blank. The chemistry itself lives in
 * chemistry/partition.ts with its sources.
 */
import { ACID_WORDS, BASE_WORDS, NEUTRAL_WORDS, distributionRatio, extractionEfficiency, parseAcidBase } from './chemistry/partition.js';

/** A value in a formula: a number (NaN is empty) or a text. */
export type Value = number | string;

/**
 * What empty arguments do to the result:
 * - `any`: an empty argument empties the result (NaN in, NaN out);
 * - `fallback`: the result is the first argument unless it is empty, then the second, so it is
 *   empty only when both are (`evaluate` says so itself);
 * - `positions`: an empty argument at one of these positions empties the result; the others may
 *   be empty with a meaning of their own, which `evaluate` and `sheet` give. `textAt(i)` is the
 *   text of argument i (at run time its value, when writing the sheet a text constant written in
 *   the formula), or undefined.
 */
export type EmptyRule =
  | { kind: 'any' }
  | { kind: 'fallback' }
  | { kind: 'positions'; positions: (textAt: (i: number) => string | undefined) => readonly number[] };

/**
 * The spreadsheet syntax a function's form is written with, handed over by the translator
 * (write/sheet-formula.ts), which owns the fragments `F`. Arguments are numbers unless said.
 */
export interface SheetKit<F> {
  /** A spreadsheet function call, e.g. `call('ABS', [x])`. */
  call(name: string, args: F[]): F;
  /** An arithmetic operator, parenthesised as the spreadsheet needs. */
  binary(op: '+' | '-' | '*' | '/' | '^', left: F, right: F): F;
  /** Unary minus. */
  neg(x: F): F;
  /** A number constant. */
  num(n: number): F;
  /** The in-formula empty value (an error value, which the whole formula's IFERROR shows as ""). */
  readonly empty: F;
  /** Argument i as a number (an empty cell reads as the in-formula empty, unless known to be filled). */
  arg(i: number): F;
  /** Every argument as a number, in order. */
  args(): F[];
  /** Build from arguments known to be filled: when any argument at `positions` is empty, the result is empty. */
  filled(positions: readonly number[], build: (kit: SheetKit<F>) => F): F;
  /** Choose on whether argument i is empty; `present` gets a kit that knows it is filled. */
  whether(i: number, choices: { empty: (kit: SheetKit<F>) => F; present: (kit: SheetKit<F>) => F }): F;
  /** Argument i as a number that may be empty, its own empty cells tested first (for a fallback). */
  maybeEmpty(i: number): F;
  /** The constant written as argument i, as text (a number as its digits), or undefined when argument i is not a constant. */
  textConstant(i: number): string | undefined;
  /** Whether argument i, read as text (trimmed, lower case), is one of `words`; a true/false fragment. */
  textIn(i: number, words: readonly string[]): F;
  /** A condition: `then` where it holds, else `otherwise`. */
  when(condition: F, then: F, otherwise: F): F;
  /** Refuse the translation with a reason (the column is then written as values). */
  refuse(reason: string): never;
}

export interface FormulaFunction {
  args: readonly [min: number, max: number];
  empty: EmptyRule;
  evaluate?: (a: readonly Value[]) => Value;
  sheet?: <F>(kit: SheetKit<F>) => F;
  crossRow?: 'parent' | 'pair';
}

const num = (v: Value): number => (typeof v === 'number' ? v : NaN);
const ANY: EmptyRule = { kind: 'any' };

/** Whether a value is empty: NaN, or a blank text. */
export function isEmptyValue(v: Value): boolean {
  return typeof v === 'number' ? Number.isNaN(v) : v.trim() === '';
}

/** A numeric argument is empty when it is not a number or is NaN (a text has no numeric value). */
const isEmptyNumber = (v: Value): boolean => typeof v !== 'number' || Number.isNaN(v);

/**
 * Spike recovery in percent: (found − background)/spike × 100.
 * US EPA SW-846 (Method 1312 §8.2.4 "%R = 100(Xs − Xu)/K"); background 0 for a blank spike or QC.
 * Multiplying before dividing keeps round numbers round (13·100/10 = 130 exactly).
 */
export function recoveryPct(found: number, spike: number, background: number): number {
  return ((found - background) * 100) / spike;
}

/** Relative percent difference |a − b| / ((a + b)/2) × 100 (US EPA SW-846 QA practice). */
export function rpdPct(a: number, b: number): number {
  return (Math.abs(a - b) * 200) / (a + b);
}

/** The acid/base word of a text, as partition.ts reads it; an unknown word is 'unknown'. */
function acidBaseOf(text: string | undefined): 'acid' | 'base' | 'neutral' | 'unknown' {
  return parseAcidBase(text ?? '') ?? 'unknown';
}

// Argument positions of the empty-input rules (made once: the engine asks per row).
const K_PH_PKA: readonly number[] = [0, 1, 2];
const K_ONLY: readonly number[] = [0];
const NONE: readonly number[] = [];

/** Excel's limit on a function's arguments (Excel specifications and limits: 255 arguments). */
const MAX_SHEET_ARGUMENTS = 255;

export const FORMULA_FUNCTIONS: Readonly<Record<string, FormulaFunction>> = {
  abs: { args: [1, 1], empty: ANY, evaluate: (a) => Math.abs(num(a[0]!)), sheet: (k) => k.call('ABS', k.args()) },
  sqrt: { args: [1, 1], empty: ANY, evaluate: (a) => Math.sqrt(num(a[0]!)), sheet: (k) => k.call('SQRT', k.args()) },
  exp: { args: [1, 1], empty: ANY, evaluate: (a) => Math.exp(num(a[0]!)), sheet: (k) => k.call('EXP', k.args()) },
  log: {
    args: [1, 2],
    empty: ANY,
    evaluate: (a) => (a.length === 2 ? Math.log(num(a[0]!)) / Math.log(num(a[1]!)) : Math.log(num(a[0]!))),
    sheet: (k) => {
      const a = k.args();
      return k.call(a.length === 1 ? 'LN' : 'LOG', a);
    },
  },
  log10: { args: [1, 1], empty: ANY, evaluate: (a) => Math.log10(num(a[0]!)), sheet: (k) => k.call('LOG10', k.args()) },
  pow: { args: [2, 2], empty: ANY, evaluate: (a) => num(a[0]!) ** num(a[1]!), sheet: (k) => k.call('POWER', k.args()) },
  min: { args: [1, MAX_SHEET_ARGUMENTS], empty: ANY, evaluate: (a) => Math.min(...a.map(num)), sheet: (k) => k.call('MIN', k.args()) },
  max: { args: [1, MAX_SHEET_ARGUMENTS], empty: ANY, evaluate: (a) => Math.max(...a.map(num)), sheet: (k) => k.call('MAX', k.args()) },
  // Half away from zero, as a spreadsheet's ROUND (JavaScript's Math.round goes half up).
  round: {
    args: [1, 2],
    empty: ANY,
    evaluate: (a) => {
      const x = num(a[0]!);
      const f = 10 ** (a.length === 2 ? num(a[1]!) : 0);
      return (Math.sign(x) * Math.round(Math.abs(x) * f)) / f;
    },
    sheet: (k) => {
      const a = k.args();
      return k.call('ROUND', a.length === 1 ? [a[0]!, k.num(0)] : a);
    },
  },
  // Towards −∞ and +∞ (floor(−1.5) = −2): INT does the same, ROUNDDOWN would not.
  floor: { args: [1, 1], empty: ANY, evaluate: (a) => Math.floor(num(a[0]!)), sheet: (k) => k.call('INT', k.args()) },
  ceil: { args: [1, 1], empty: ANY, evaluate: (a) => Math.ceil(num(a[0]!)), sheet: (k) => k.neg(k.call('INT', [k.neg(k.arg(0))])) },
  if_empty: {
    args: [2, 2],
    empty: { kind: 'fallback' },
    evaluate: (a) => (isEmptyValue(a[0]!) ? a[1]! : a[0]!),
    sheet: (k) => k.whether(0, { empty: (o) => o.maybeEmpty(1), present: (o) => o.arg(0) }),
  },
  /**
   * D = K for a neutral analyte; K/(1+10^(pH−pKa)) for an acid; K/(1+10^(pKa−pH)) for a base
   * (Harvey, Analytical Chemistry 2.0 §7.7; Harris, Quantitative Chemical Analysis; REFERENCES.md §1).
   * Empty without K; for an acid or a base, also without pH or pKa; empty for an unknown word.
   */
  distribution_ratio: {
    args: [4, 4],
    empty: { kind: 'positions', positions: (textAt) => (['acid', 'base'].includes(acidBaseOf(textAt(3))) ? K_PH_PKA : K_ONLY) },
    evaluate: (a) => {
      const acidBase = parseAcidBase(typeof a[3] === 'string' ? a[3] : '');
      return acidBase ? distributionRatio(num(a[0]!), num(a[1]!), num(a[2]!), acidBase) : NaN;
    },
    sheet: (k) => {
      const ionised = (acid: boolean) =>
        k.filled([0, 1, 2], (g) => {
          const [hi, lo] = acid ? [g.arg(1), g.arg(2)] : [g.arg(2), g.arg(1)];
          const exponent = g.binary('-', hi, lo);
          return g.binary('/', g.arg(0), g.binary('+', g.num(1), g.binary('^', g.num(10), exponent)));
        });
      const neutral = () => k.filled([0], (g) => g.arg(0));
      const written = k.textConstant(3);
      if (written !== undefined) {
        const word = acidBaseOf(written);
        if (word === 'unknown') k.refuse(`the acid_base value "${written}" is not acid, base or neutral`);
        return word === 'acid' ? ionised(true) : word === 'base' ? ionised(false) : neutral();
      }
      return k.when(k.textIn(3, ACID_WORDS), ionised(true), k.when(k.textIn(3, BASE_WORDS), ionised(false), k.when(k.textIn(3, NEUTRAL_WORDS), neutral(), k.empty)));
    },
  },
  /**
   * E = 1 − (V_aq/(V_aq + D·V_org))^n as a fraction (IUPAC Gold Book F02503; REFERENCES.md §1);
   * an empty D gives 1 (no partition coefficient: complete transfer assumed), whatever else is empty.
   */
  extraction_efficiency: {
    args: [4, 4],
    empty: { kind: 'positions', positions: () => NONE },
    evaluate: (a) => extractionEfficiency(num(a[0]!), num(a[1]!), num(a[2]!), num(a[3]!)),
    sheet: (k) =>
      k.whether(0, {
        empty: (o) => o.num(1),
        present: (o) =>
          o.filled([0, 1, 2, 3], (g) => {
            const aq = g.arg(1);
            const ratio = g.binary('/', aq, g.binary('+', aq, g.binary('*', g.arg(0), g.arg(2))));
            return g.binary('-', g.num(1), g.binary('^', ratio, g.arg(3)));
          }),
      }),
  },
  // %R = (found − background)/spike × 100 (EPA SW-846 8000D; REFERENCES.md §2).
  recovery_pct: {
    args: [3, 3],
    empty: ANY,
    evaluate: (a) => recoveryPct(num(a[0]!), num(a[1]!), num(a[2]!)),
    sheet: (k) => {
      const [found, spike, background] = k.args();
      return k.binary('*', k.binary('/', k.binary('-', found!, background!), spike!), k.num(100));
    },
  },
  // RPD = |a − b| / ((a + b)/2) × 100 (REFERENCES.md §2).
  rpd_pct: {
    args: [2, 2],
    empty: ANY,
    evaluate: (a) => rpdPct(num(a[0]!), num(a[1]!)),
    sheet: (k) => {
      const [a, b] = k.args();
      return k.binary('*', k.binary('/', k.call('ABS', [k.binary('-', a!, b!)]), k.binary('/', k.binary('+', a!, b!), k.num(2))), k.num(100));
    },
  },
  parent: { args: [1, 1], empty: ANY, crossRow: 'parent' },
  pair: { args: [1, 1], empty: ANY, crossRow: 'pair' },
};

/** The registry's entry for a name a formula calls; never an inherited property such as "constructor". */
export function formulaFunction(name: string): FormulaFunction | undefined {
  return Object.hasOwn(FORMULA_FUNCTIONS, name) ? FORMULA_FUNCTIONS[name] : undefined;
}

/** Why a call with `count` arguments is refused, or undefined when the count is right. */
export function argumentCountProblem(name: string, spec: FormulaFunction, count: number): string | undefined {
  const [min, max] = spec.args;
  if (count >= min && count <= max) return undefined;
  const want = min === max ? `${min}` : `${min} to ${max}`;
  return `${name}() takes ${want} argument${max === 1 ? '' : 's'}, got ${count}`;
}

/**
 * The engine's side of an empty-input rule, for one call site whose argument values are
 * refilled in `a` for every row: a test of whether they empty the result before `evaluate`
 * is asked (a fallback decides in `evaluate` itself).
 */
export function emptinessTest(rule: EmptyRule, a: readonly Value[]): () => boolean {
  if (rule.kind === 'fallback') return () => false;
  if (rule.kind === 'any') {
    return () => {
      for (let i = 0; i < a.length; i++) if (isEmptyNumber(a[i]!)) return true;
      return false;
    };
  }
  const textAt = (i: number): string | undefined => {
    const v = a[i];
    return typeof v === 'string' ? v : undefined;
  };
  return () => {
    for (const i of rule.positions(textAt)) if (isEmptyNumber(a[i]!)) return true;
    return false;
  };
}
