/**
 * Translate a method formula (a parsed mathjs expression) into a spreadsheet formula, so the
 * reviewer's workbook can carry live formulas that a spreadsheet program recomputes to the
 * engine's numbers.
 *
 * Output convention (exceljs `{formula, result}`): English function names, comma separators,
 * no leading "=".
 *
 * Empty cells. The engine reads an empty input as NaN and an empty result stays empty; a
 * spreadsheet reads a blank cell as 0. So every numeric cell reference is protected:
 * - references whose emptiness empties the whole (sub)expression are tested once, at the top or
 *   at the start of a branch: `IF(OR(F2="",G2=""),"",...)`. `X=""` is true both for a blank cell
 *   and for a formula cell showing "", which is how an empty computed column looks;
 * - any other numeric reference reads `IF(X="",NA(),X)`.
 * Inside the formula "empty" travels as an error value, and the whole formula is wrapped in
 * `IFERROR(...,"")`, which also turns a division by zero (empty in the engine) into "".
 *
 * Known differences, all at the edges:
 * - the engine (mathjs) carries ±Infinity through intermediate steps (`1/(1/0)` is 0 there, ""
 *   here; `if_empty(1/0, 5)` is Infinity, so empty, there and 5 here); a non-finite final result
 *   is empty in both;
 * - mathjs `==` and `<` compare numbers with a relative tolerance of 1e-12; spreadsheets compare
 *   almost exactly;
 * - text is compared as LOWER(TRIM(cell)) against the constant as written; the engine compares
 *   the normalised field value, so a lab code that needs an alias table (not just case and
 *   spaces) must be given a cell that holds the canonical code.
 * - the formula knows nothing of row validation: a row the engine rejects (INPUT_ERROR, e.g. a
 *   zero volume) still computes here, so write such rows' computed cells as plain values.
 * Everything else follows the engine: comparisons with an empty number are false (`!=` true),
 * `and`/`or`/`not` and conditions treat an empty number as false, and a true/false result is
 * written as 1/0 (the engine's numeric columns hold it so).
 *
 * Cells should hold numbers as numbers; a number stored as text ("12.5") is converted by the
 * arithmetic, but one with a decimal comma is not.
 *
 * Functions are the registry's (src/formula-functions.ts): each entry's argument counts, its rule
 * for empty inputs (which cells `strict` tests) and its spreadsheet form, written with the SheetKit
 * this translator hands it. Operators, comparisons and conditions are translated here.
 */
import { ACID_WORDS, BASE_WORDS, NEUTRAL_WORDS } from '../chemistry/partition.js';
import { argumentCountProblem, formulaFunction, type FormulaFunction, type SheetKit } from '../formula-functions.js';
import type {
  ConditionalNode,
  ConstantNode,
  FunctionNode,
  MathNode,
  OperatorNode,
  ParenthesisNode,
  SymbolNode,
} from 'mathjs';

/** Whatever a mathjs ConstantNode may hold; only numbers and text are translated. */
type AnyConstant = ConstantNode['value'] | string | boolean | null | undefined;

export type CrossRowFunction = 'parent' | 'pair';

export interface SheetFormulaContext {
  /**
   * Cell holding this row's value of a field, e.g. "F2" or "Method!$C$5" (a single cell reference:
   * it is tested with `="")`; undefined: no such field (the formula is refused).
   */
  cellOf(symbol: string): string | undefined;
  /** Cell of a field in the parent or paired row, e.g. "M7"; undefined: this row has none (value empty). */
  crossRowCellOf(fn: CrossRowFunction, symbol: string): string | undefined;
  /**
   * True for a text field (sample_type, acid_base, ...). Optional: without it a field is text only
   * where its use says so (compared with a text constant, or the acid_base argument).
   */
  isText?(symbol: string): boolean;
}

export type SheetFormulaResult =
  | {
      /** Formula text without the leading "=". */
      formula: string;
      /** Every cell the formula reads, each once. */
      cells: string[];
    }
  | { unsupported: string };

// The acid/base words are the engine's own (src/chemistry/partition.ts), re-exported for the workbook.
export { ACID_WORDS, BASE_WORDS, NEUTRAL_WORDS };

/** Excel's limits: 8,192 characters per formula, 255 per text constant. */
const MAX_FORMULA_LENGTH = 8192;
const MAX_TEXT_CONSTANT = 255;

export function toSheetFormula(node: MathNode, ctx: SheetFormulaContext): SheetFormulaResult {
  const translator = new Translator(ctx);
  try {
    const formula = translator.top(node);
    if (formula.length > MAX_FORMULA_LENGTH) {
      return {
        unsupported: `the spreadsheet formula would be ${formula.length} characters long, above the limit of ${MAX_FORMULA_LENGTH}`,
      };
    }
    return { formula, cells: [...translator.cells] };
  } catch (err) {
    // Unsupported is private control flow: it never leaves this module.
    if (err instanceof Unsupported) return { unsupported: err.message };
    throw err;
  }
}

class Unsupported extends Error {}

type Kind = 'number' | 'text' | 'bool';

/** Spreadsheet operator precedence, loosest first (unary minus binds tighter than ^ there). */
const CMP = 1;
const ADD = 2;
const MUL = 3;
const POW = 4;
const NEG = 5;
const ATOM = 6;

interface Frag {
  text: string;
  prec: number;
}

const atom = (text: string): Frag => ({ text, prec: ATOM });
const paren = (f: Frag): Frag => atom(`(${f.text})`);
const call = (name: string, args: Frag[]): Frag => atom(`${name}(${args.map((a) => a.text).join(',')})`);
const NA = atom('NA()');
const EMPTY_TEXT = atom('""');
const ZERO = atom('0');
const ONE = atom('1');

const OP_PREC: Record<string, number> = {
  '+': ADD,
  '-': ADD,
  '*': MUL,
  '/': MUL,
  '^': POW,
  '=': CMP,
  '<>': CMP,
  '<': CMP,
  '<=': CMP,
  '>': CMP,
  '>=': CMP,
};

function binary(op: string, l: Frag, r: Frag): Frag {
  const p = OP_PREC[op];
  let left = l;
  let right = r;
  if (p === POW) {
    // mathjs ^ is right-associative and looser than unary minus; spreadsheets differ on both,
    // so anything but an atom is parenthesised on either side.
    if (l.prec < ATOM) left = paren(l);
    if (r.prec < ATOM) right = paren(r);
  } else if (p === CMP) {
    if (l.prec <= CMP) left = paren(l);
    if (r.prec <= CMP) right = paren(r);
  } else {
    if (l.prec < p) left = paren(l);
    if (r.prec <= p || r.prec === NEG) right = paren(r);
  }
  return { text: `${left.text}${op}${right.text}`, prec: p };
}

function neg(x: Frag): Frag {
  return { text: `-${x.prec <= NEG ? paren(x).text : x.text}`, prec: NEG };
}

function numberFrag(v: number): Frag {
  if (!Number.isFinite(v)) throw new Unsupported(`the constant "${v}" is not a finite number`);
  if (v < 0) return neg(numberFrag(-v));
  return atom(String(v).toUpperCase());
}

function textFrag(v: string): Frag {
  if (v.length > MAX_TEXT_CONSTANT) {
    throw new Unsupported(`the text constant "${v.slice(0, 20)}..." is longer than ${MAX_TEXT_CONSTANT} characters`);
  }
  return atom(`"${v.replaceAll('"', '""')}"`);
}

/** One of the words, compared with an already normalised text fragment. */
function wordTest(t: Frag, words: readonly string[]): Frag {
  const tests = words.map((w) => binary('=', t, textFrag(w)));
  return tests.length === 1 ? tests[0] : call('OR', tests);
}

/** A reference: a cell, a cross-row look-up with no row, or a mathjs constant. */
type Ref = { cell: string } | { missing: true } | { constant: Frag };

/** Marks a cross-row look-up with no row in a strict set: the (sub)expression is always empty. */
const MISSING = '\u0000missing';

const CONSTANTS: Record<string, Frag> = { pi: atom('PI()'), e: atom('EXP(1)') };

const ARITHMETIC = new Set(['add', 'subtract', 'multiply', 'divide', 'pow', 'unaryMinus', 'unaryPlus']);
const COMPARISON: Record<string, string> = {
  equal: '=',
  unequal: '<>',
  smaller: '<',
  smallerEq: '<=',
  larger: '>',
  largerEq: '>=',
};
const LOGICAL = new Set(['and', 'or', 'not']);
const BINARY_ARITHMETIC: Record<string, string> = { add: '+', subtract: '-', multiply: '*', divide: '/', pow: '^' };

function functionName(node: FunctionNode): string {
  const fn = node.fn as unknown as MathNode;
  if (fn.type !== 'SymbolNode') throw new Unsupported(`"${node.toString()}" calls something that is not a function name`);
  return (fn as SymbolNode).name;
}

function stripParens(node: MathNode): MathNode {
  let n = node;
  while (n.type === 'ParenthesisNode') n = (n as ParenthesisNode).content;
  return n;
}

/** The kind a node yields by itself; undefined for a reference whose kind comes from its use. */
function naturalKind(node: MathNode, ctx: SheetFormulaContext): Kind | undefined {
  switch (node.type) {
    case 'SymbolNode':
      return ctx.isText?.((node as SymbolNode).name) ? 'text' : undefined;
    case 'ConstantNode': {
      const v = (node as ConstantNode<AnyConstant>).value;
      return typeof v === 'string' ? 'text' : typeof v === 'number' ? 'number' : undefined;
    }
    case 'ParenthesisNode':
      return naturalKind((node as ParenthesisNode).content, ctx);
    case 'OperatorNode': {
      const fn = (node as OperatorNode).fn as string;
      if (ARITHMETIC.has(fn)) return 'number';
      if (own(COMPARISON, fn) !== undefined || LOGICAL.has(fn)) return 'bool';
      return undefined;
    }
    case 'ConditionalNode': {
      const c = node as ConditionalNode;
      return naturalKind(c.trueExpr, ctx) ?? naturalKind(c.falseExpr, ctx);
    }
    case 'FunctionNode': {
      const f = node as FunctionNode;
      const name = f.fn?.name;
      if (!formulaFunction(name ?? '')?.crossRow) return 'number';
      const arg = f.args[0];
      return arg?.type === 'SymbolNode' ? naturalKind(arg, ctx) : undefined;
    }
    default:
      return undefined;
  }
}

/** A table entry by a name from the formula; never an inherited property such as "constructor". */
function own<T>(table: Record<string, T>, key: string): T | undefined {
  return Object.hasOwn(table, key) ? table[key] : undefined;
}

function union(sets: Set<string>[]): Set<string> {
  const out = new Set<string>();
  for (const s of sets) for (const x of s) out.add(x);
  return out;
}

function intersect(a: Set<string>, b: Set<string>): Set<string> {
  return new Set([...a].filter((x) => b.has(x)));
}

function minus(a: Set<string>, b: ReadonlySet<string>): Set<string> {
  return new Set([...a].filter((x) => !b.has(x)));
}

class Translator {
  cells = new Set<string>();

  constructor(private readonly ctx: SheetFormulaContext) {}

  top(node: MathNode): string {
    const kind = naturalKind(node, this.ctx) ?? 'number';
    if (kind === 'text') throw new Unsupported(`"${node.toString()}" gives text; a formula column holds numbers`);
    // A true/false result is stored as 1/0 by the engine's numeric columns.
    if (kind === 'bool') return call('IF', [this.tr(node, 'bool', new Set()), ONE, ZERO]).text;
    const refs = this.strict(node);
    if (refs.has(MISSING)) return '""';
    const body = call('IFERROR', [this.tr(node, 'number', refs), EMPTY_TEXT]);
    return refs.size > 0 ? call('IF', [this.emptyTest(refs), EMPTY_TEXT, body]).text : body.text;
  }

  // ---- references -------------------------------------------------------------------------

  /** The reference a node stands for, or undefined when it is not a plain reference. */
  private refOf(node: MathNode): Ref | undefined {
    // NaN is the engine's empty value: it behaves exactly as a cross-row look-up with no row.
    if (node.type === 'ConstantNode' && Number.isNaN((node as ConstantNode<AnyConstant>).value)) return { missing: true };
    if (node.type === 'SymbolNode' && (node as SymbolNode).name === 'NaN') return { missing: true };
    if (node.type === 'SymbolNode') {
      const name = (node as SymbolNode).name;
      const cell = this.ctx.cellOf(name);
      if (cell !== undefined) return { cell };
      const constant = own(CONSTANTS, name);
      if (constant) return { constant };
      throw new Unsupported(`the symbol "${name}" has no cell in the sheet`);
    }
    if (node.type === 'FunctionNode') {
      const f = node as FunctionNode;
      const name = functionName(f);
      const crossRow = formulaFunction(name)?.crossRow;
      if (!crossRow) return undefined;
      const arg = f.args.length === 1 ? f.args[0] : undefined;
      if (arg?.type !== 'SymbolNode') {
        throw new Unsupported(`"${name}" expects one column name, got "${f.toString()}"`);
      }
      const cell = this.ctx.crossRowCellOf(crossRow, (arg as SymbolNode).name);
      return cell === undefined ? { missing: true } : { cell };
    }
    return undefined;
  }

  private refNumber(ref: Ref, guarded: ReadonlySet<string>): Frag {
    if ('constant' in ref) return ref.constant;
    if ('missing' in ref) return NA;
    this.cells.add(ref.cell);
    if (guarded.has(ref.cell)) return atom(ref.cell);
    return call('IF', [binary('=', atom(ref.cell), EMPTY_TEXT), NA, atom(ref.cell)]);
  }

  private refText(ref: Ref, node: MathNode): Frag {
    if ('constant' in ref) throw new Unsupported(`the constant "${node.toString()}" is used as text`);
    if ('missing' in ref) return EMPTY_TEXT;
    this.cells.add(ref.cell);
    return call('LOWER', [call('TRIM', [atom(ref.cell)])]);
  }

  /** `X=""` or `OR(X="",Y="")`: true when any of the cells is empty. */
  private emptyTest(refs: Set<string>): Frag {
    const tests = [...refs].map((cell) => {
      this.cells.add(cell);
      return binary('=', atom(cell), EMPTY_TEXT);
    });
    return tests.length === 1 ? tests[0] : call('OR', tests);
  }

  // ---- strictness -------------------------------------------------------------------------

  /**
   * Cells (in numeric use) whose emptiness empties this numeric expression, as the engine
   * evaluates it; MISSING when a cross-row look-up with no row always empties it.
   */
  private strict(node: MathNode): Set<string> {
    const ref = this.refOf(node);
    if (ref) return 'cell' in ref ? new Set([ref.cell]) : 'missing' in ref ? new Set([MISSING]) : new Set();
    switch (node.type) {
      case 'ParenthesisNode':
        return this.strict((node as ParenthesisNode).content);
      case 'OperatorNode': {
        const op = node as OperatorNode;
        return ARITHMETIC.has(op.fn) ? union(op.args.map((a) => this.strict(a))) : new Set();
      }
      case 'ConditionalNode': {
        const c = node as ConditionalNode;
        return intersect(this.strict(c.trueExpr), this.strict(c.falseExpr));
      }
      case 'FunctionNode': {
        // The function's rule for empty inputs (src/formula-functions.ts); a call the registry
        // refuses is refused when it is translated.
        const f = node as FunctionNode;
        const name = functionName(f);
        const spec = formulaFunction(name);
        if (!spec || argumentCountProblem(name, spec, f.args.length)) return new Set();
        const rule = spec.empty;
        if (rule.kind === 'any') return union(f.args.map((a) => this.strict(a)));
        if (rule.kind === 'fallback') return f.args.map((a) => this.strict(a)).reduce(intersect);
        return union(rule.positions((i) => constantText(f.args[i]!)).map((i) => this.strict(f.args[i]!)));
      }
      default:
        return new Set();
    }
  }

  // ---- translation ------------------------------------------------------------------------

  /** Translate a node for use as `want`; `guarded`: cells known not to be empty here. */
  private tr(node: MathNode, want: Kind, guarded: ReadonlySet<string>): Frag {
    const nat = naturalKind(node, this.ctx);
    if (nat !== undefined && nat !== want) return this.convert(node, nat, want, guarded);
    const ref = this.refOf(node);
    if (ref) {
      if (want === 'number') return this.refNumber(ref, guarded);
      if (want === 'text') return this.refText(ref, node);
      return this.truthy(node, guarded);
    }
    switch (node.type) {
      case 'ParenthesisNode':
        return paren(this.tr((node as ParenthesisNode).content, want, guarded));
      case 'ConstantNode': {
        const v = (node as ConstantNode<AnyConstant>).value;
        if (typeof v === 'number') return numberFrag(v);
        if (typeof v === 'string') return textFrag(v);
        throw new Unsupported(`the constant "${String(v)}" is neither a number nor text`);
      }
      case 'ConditionalNode': {
        const c = node as ConditionalNode;
        return call('IF', [
          this.tr(c.condition, 'bool', guarded),
          this.branch(c.trueExpr, want, guarded),
          this.branch(c.falseExpr, want, guarded),
        ]);
      }
      case 'OperatorNode':
        return this.operator(node as OperatorNode, guarded);
      case 'FunctionNode':
        return this.func(node as FunctionNode, guarded);
      default:
        throw new Unsupported(`"${node.toString()}" (${node.type}) is not allowed in a method formula`);
    }
  }

  private convert(node: MathNode, from: Kind, to: Kind, guarded: ReadonlySet<string>): Frag {
    if (from === 'number' && to === 'bool') return this.truthy(node, guarded);
    if (from === 'bool' && to === 'number') return call('IF', [this.tr(node, 'bool', guarded), ONE, ZERO]);
    if (from === 'text' && to === 'bool') return binary('<>', this.tr(node, 'text', guarded), EMPTY_TEXT);
    const words: Record<Kind, string> = { number: 'a number', text: 'text', bool: 'true or false' };
    throw new Unsupported(`"${node.toString()}" gives ${words[from]} where ${words[to]} is needed`);
  }

  /** A numeric expression used as a condition: non-zero is true, empty is false (mathjs truthiness). */
  private truthy(node: MathNode, guarded: ReadonlySet<string>): Frag {
    return this.compareNumbers(node, undefined, { op: '<>', whenEmpty: 'FALSE', guarded });
  }

  /**
   * A numeric subexpression that may be empty: its own not-yet-guarded strict cells are tested
   * first and give `whenEmpty` (NA(), the in-formula "empty").
   */
  private branch(node: MathNode, want: Kind, guarded: ReadonlySet<string>): Frag {
    if (want !== 'number') return this.tr(node, want, guarded);
    return this.guardedBy(this.strict(node), guarded, (g) => this.tr(node, 'number', g));
  }

  private guardedBy(
    refs: Set<string>,
    guarded: ReadonlySet<string>,
    build: (guarded: ReadonlySet<string>) => Frag,
    whenEmpty: Frag = NA,
  ): Frag {
    const open = minus(refs, guarded);
    if (open.has(MISSING)) return whenEmpty;
    const body = build(union([new Set(guarded), open]));
    return open.size > 0 ? call('IF', [this.emptyTest(open), whenEmpty, body]) : body;
  }

  private compareNumbers(
    left: MathNode,
    right: MathNode | undefined,
    options: { op: string; whenEmpty: 'TRUE' | 'FALSE'; guarded: ReadonlySet<string> },
  ): Frag {
    const { op, whenEmpty, guarded } = options;
    const refs = union([this.strict(left), right ? this.strict(right) : new Set<string>()]);
    const plain = (n: MathNode | undefined): boolean => {
      if (n === undefined) return true;
      const s = stripParens(n);
      return (s.type === 'ConstantNode' && typeof (s as ConstantNode<AnyConstant>).value === 'number') || this.refOf(s) !== undefined;
    };
    return this.guardedBy(
      refs,
      guarded,
      (g) => {
        const cmp = binary(op, this.tr(left, 'number', g), right ? this.tr(right, 'number', g) : ZERO);
        // A computed operand can fail (0/0 is NaN in the engine): the comparison is then as with an empty value.
        return plain(left) && plain(right) ? cmp : call('IFERROR', [cmp, atom(whenEmpty)]);
      },
      atom(whenEmpty),
    );
  }

  private operator(node: OperatorNode, guarded: ReadonlySet<string>): Frag {
    const fn = node.fn as string;
    const args = node.args;
    if (fn === 'unaryMinus') return neg(this.tr(args[0], 'number', guarded));
    if (fn === 'unaryPlus') return this.tr(args[0], 'number', guarded);
    const arithmetic = own(BINARY_ARITHMETIC, fn);
    if (arithmetic !== undefined) {
      const frags = args.map((a) => this.tr(a, 'number', guarded));
      // mathjs builds binary nodes; fold left should a tree hold more operands.
      return frags.slice(1).reduce((acc, f) => binary(arithmetic, acc, f), frags[0]);
    }
    const cmp = own(COMPARISON, fn);
    if (cmp !== undefined) {
      const [l, r] = args;
      const kl = naturalKind(l, this.ctx);
      const kr = naturalKind(r, this.ctx);
      if (kl === 'text' || kr === 'text') {
        if (cmp !== '=' && cmp !== '<>') throw new Unsupported(`"${node.toString()}" orders text; only == and != compare text`);
        return binary(cmp, this.tr(l, 'text', guarded), this.tr(r, 'text', guarded));
      }
      if ((kl === 'bool' || kr === 'bool') && (cmp === '=' || cmp === '<>')) {
        return binary(cmp, this.tr(l, 'bool', guarded), this.tr(r, 'bool', guarded));
      }
      // mathjs: a comparison with NaN is false, except != which is true.
      return this.compareNumbers(l, r, { op: cmp, whenEmpty: cmp === '<>' ? 'TRUE' : 'FALSE', guarded });
    }
    if (fn === 'and' || fn === 'or') return call(fn.toUpperCase(), args.map((a) => this.tr(a, 'bool', guarded)));
    if (fn === 'not') return call('NOT', [this.tr(args[0], 'bool', guarded)]);
    throw new Unsupported(`the operator "${node.op}" has no spreadsheet translation`);
  }

  private func(node: FunctionNode, guarded: ReadonlySet<string>): Frag {
    const name = functionName(node);
    const spec = formulaFunction(name);
    if (!spec?.sheet) throw new Unsupported(`the function "${name}" has no spreadsheet translation`);
    const countProblem = argumentCountProblem(name, spec, node.args.length);
    if (countProblem) throw new Unsupported(countProblem);
    return spec.sheet(this.kit(spec, node.args, guarded));
  }

  /** The SheetKit a registry entry writes its spreadsheet form with, for these arguments and known-filled cells. */
  private kit(spec: FormulaFunction, args: MathNode[], guarded: ReadonlySet<string>): SheetKit<Frag> {
    const kitWith = (g: ReadonlySet<string>) => this.kit(spec, args, g);
    return {
      call,
      binary,
      neg,
      num: numberFrag,
      empty: NA,
      arg: (i) => this.tr(args[i]!, 'number', guarded),
      args: () => args.map((a) => this.tr(a, 'number', guarded)),
      filled: (positions, build) => this.guardedBy(union(positions.map((i) => this.strict(args[i]!))), guarded, (g) => build(kitWith(g))),
      whether: (i, choices) =>
        this.whenEmpty(args[i]!, guarded, { empty: () => choices.empty(kitWith(guarded)), present: (g) => choices.present(kitWith(g)) }),
      maybeEmpty: (i) => this.branch(args[i]!, 'number', guarded),
      textConstant: (i) => constantText(args[i]!),
      textIn: (i, words) => wordTest(this.tr(args[i]!, 'text', guarded), words),
      when: (condition, then, otherwise) => call('IF', [condition, then, otherwise]),
      refuse: (reason) => {
        throw new Unsupported(reason);
      },
    };
  }

  /**
   * Choose on whether a numeric node is empty. `present` gets the cells then known to be filled.
   * A plain reference is tested with `X=""`; anything else by whether it evaluates to an error.
   */
  private whenEmpty(
    node: MathNode,
    guarded: ReadonlySet<string>,
    choices: { empty: () => Frag; present: (guarded: ReadonlySet<string>) => Frag },
  ): Frag {
    const ref = this.refOf(stripParens(node));
    if (ref) {
      if ('missing' in ref) {
        this.validateOnly(() => choices.present(guarded)); // still refuse what cannot be translated
        return choices.empty();
      }
      if ('constant' in ref || guarded.has(ref.cell)) {
        this.validateOnly(choices.empty);
        return choices.present(guarded);
      }
      const known = union([new Set(guarded), new Set([ref.cell])]);
      return call('IF', [this.emptyTest(new Set([ref.cell])), choices.empty(), choices.present(known)]);
    }
    const value = this.branch(node, 'number', guarded);
    const known = union([new Set(guarded), minus(this.strict(node), new Set([MISSING]))]);
    return call('IF', [call('ISERROR', [value]), choices.empty(), choices.present(known)]);
  }

  /** Translate an alternative that will not be emitted, to refuse what cannot be translated; its cells are not listed. */
  private validateOnly(run: () => Frag): void {
    const before = new Set(this.cells);
    run();
    this.cells = before;
  }
}

/** The constant written as a function's argument, as text; undefined when the argument is not a constant. */
function constantText(node: MathNode): string | undefined {
  const n = stripParens(node);
  return n.type === 'ConstantNode' ? String((n as ConstantNode<AnyConstant>).value) : undefined;
}
