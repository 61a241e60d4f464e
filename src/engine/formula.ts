import type { MathNode } from 'mathjs';
import { argumentCountProblem, emptinessTest, formulaFunction, type Value } from '../formula-functions.js';
import { parseFormula } from './sandbox.js';

/**
 * Formula compilation: mathjs parses, we check the tree against an allow-list and
 * turn it into a tree of closures evaluated row by row over finished columns.
 * Nothing in a formula can define, load or evaluate code: only the node types
 * listed here and the functions of ../formula-functions.ts exist (DESIGN.md §3;
 * LIBRARY-NOTES.md §1).
 *
 * Values are numbers or text. NaN is "empty": arithmetic on it gives NaN, a
 * comparison with it gives NaN, a conditional on it gives NaN.
 */
export type { Value };
export type RowFn = (row: number) => Value;

/** What the evaluator can read while a formula runs. */
export interface EvalContext {
  number(name: string): Float64Array | undefined;
  text(name: string): readonly string[] | undefined;
  /** Row whose parent_id this row names (same analyte); −1 when none. */
  parentRow: Int32Array;
  /** Row this row is paired with for RPD (msd→ms, lcsd→lcs, dup→parent); −1 when none. */
  pairRow: Int32Array;
}

export type SymbolKind = 'number' | 'text';

export interface CompiledFormula {
  name: string;
  expr: string;
  node: MathNode;
  /** Column names this formula reads (own row or cross-row). */
  dependencies: string[];
  /** Bind to finished columns; the returned function computes one row. */
  bind(ctx: EvalContext): RowFn;
}

/** Why a formula was refused; the caller adds the method file and line. */
export class FormulaError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'FormulaError';
  }
}

export const MAX_DEPTH = 64;
export const MAX_NODES = 2000;
/** Longest formula text parsed (the node and depth limits only apply after parsing). */
export const MAX_EXPR_CHARS = 10_000;

/** Constants a formula may name. */
const CONSTANTS: Record<string, number> = { pi: Math.PI, e: Math.E, NaN: NaN };

const num = (v: Value): number => (typeof v === 'number' ? v : NaN);

const BINARY: Record<string, (x: Value, y: Value) => Value> = {
  add: (x, y) => num(x) + num(y),
  subtract: (x, y) => num(x) - num(y),
  multiply: (x, y) => num(x) * num(y),
  divide: (x, y) => num(x) / num(y),
  // An empty base empties the power, as every other operand does (JavaScript's NaN ** 0 is 1).
  pow: (x, y) => {
    const base = num(x);
    return Number.isNaN(base) ? NaN : base ** num(y);
  },
  equal: (x, y) => compare(x, y, (a, b) => a === b),
  unequal: (x, y) => compare(x, y, (a, b) => a !== b),
  smaller: (x, y) => compare(x, y, (a, b) => a < b),
  smallerEq: (x, y) => compare(x, y, (a, b) => a <= b),
  larger: (x, y) => compare(x, y, (a, b) => a > b),
  largerEq: (x, y) => compare(x, y, (a, b) => a >= b),
};

/**
 * Comparisons and truth follow mathjs, so a formula means what its language says
 * and what the workbook's spreadsheet translation computes (write/sheet-formula.ts):
 * a comparison with an empty number is false (!= is true), an empty number is false.
 * Text compares without case or surrounding spaces; text against a number is empty.
 */
function compare<T extends number | string>(x: Value, y: Value, test: (a: T, b: T) => boolean): number {
  if (typeof x === 'string' && typeof y === 'string') return test(x.trim().toLowerCase() as T, y.trim().toLowerCase() as T) ? 1 : 0;
  if (typeof x === 'string' || typeof y === 'string') return NaN;
  return test(x as T, y as T) ? 1 : 0;
}

function truth(v: Value): number {
  if (typeof v === 'string') return v.trim() === '' ? 0 : 1;
  return v !== 0 && !Number.isNaN(v) ? 1 : 0;
}

/**
 * Compile one formula. `symbols` says what each name a formula may use is
 * (an input field, a derived column, another formula column).
 */
export function compileFormula(
  def: { name: string; expr: string },
  symbols: ReadonlyMap<string, SymbolKind>,
): CompiledFormula {
  let node: MathNode;
  if (def.expr.length > MAX_EXPR_CHARS) {
    throw new FormulaError(`the formula is ${def.expr.length} characters long; expected at most ${MAX_EXPR_CHARS}`);
  }
  try {
    node = parseFormula(def.expr);
  } catch (err) {
    const msg = err instanceof RangeError ? 'the expression is nested too deeply' : firstLine((err as Error).message);
    throw new FormulaError(`cannot parse the formula: ${msg}`);
  }
  const deps = new Set<string>();
  let count = 0;
  const build = (n: MathNode, depth: number): ((ctx: EvalContext) => RowFn) => {
    if (++count > MAX_NODES) throw new FormulaError(`the formula has more than ${MAX_NODES} parts`);
    if (depth > MAX_DEPTH) throw new FormulaError(`the formula is nested more than ${MAX_DEPTH} levels deep`);
    const any = n as unknown as Record<string, unknown>;
    switch (n.type) {
      case 'ConstantNode': {
        const v = any.value;
        if (typeof v === 'number') return () => () => v;
        if (typeof v === 'string') return () => () => v;
        if (typeof v === 'boolean') return () => () => (v ? 1 : 0);
        throw new FormulaError(`constants of this kind are not allowed: ${JSON.stringify(v)}`);
      }
      case 'SymbolNode': {
        const name = any.name as string;
        // Own keys only: `name in CONSTANTS` would also find constructor, __proto__,
        // toString ... on Object.prototype and hand a function to the formula.
        if (Object.hasOwn(CONSTANTS, name)) {
          const c = CONSTANTS[name]!;
          return () => () => c;
        }
        const kind = symbols.get(name);
        if (!kind) {
          if (formulaFunction(name)) throw new FormulaError(`"${name}" is a function; call it with arguments`);
          throw new FormulaError(`unknown name "${name}"`);
        }
        deps.add(name);
        return (ctx) => columnReader(ctx, name, kind);
      }
      case 'ParenthesisNode':
        return build(any.content as MathNode, depth + 1);
      case 'ConditionalNode': {
        const c = build(any.condition as MathNode, depth + 1);
        const t = build(any.trueExpr as MathNode, depth + 1);
        const f = build(any.falseExpr as MathNode, depth + 1);
        return (ctx) => {
          const cf = c(ctx);
          const tf = t(ctx);
          const ff = f(ctx);
          return (row) => {
            return truth(cf(row)) ? tf(row) : ff(row);
          };
        };
      }
      case 'OperatorNode': {
        const fn = any.fn as string;
        const args = (any.args as MathNode[]).map((a) => build(a, depth + 1));
        if (args.length === 1) {
          const [a] = args as [(ctx: EvalContext) => RowFn];
          if (fn === 'unaryMinus') return (ctx) => { const af = a(ctx); return (r) => -num(af(r)); };
          if (fn === 'unaryPlus') return (ctx) => { const af = a(ctx); return (r) => num(af(r)); };
          if (fn === 'not') return (ctx) => { const af = a(ctx); return (r) => 1 - truth(af(r)); };
        }
        if (args.length === 2) {
          const [a, b] = args as [(ctx: EvalContext) => RowFn, (ctx: EvalContext) => RowFn];
          if (fn === 'and' || fn === 'or') {
            const isAnd = fn === 'and';
            return (ctx) => {
              const af = a(ctx);
              const bf = b(ctx);
              return (r) => {
                const x = truth(af(r));
                if (isAnd ? x === 0 : x === 1) return x;
                return truth(bf(r));
              };
            };
          }
          const op = BINARY[fn];
          if (op) return (ctx) => { const af = a(ctx); const bf = b(ctx); return (r) => op(af(r), bf(r)); };
        }
        // % is mathjs's percent or remainder: neither is a method's arithmetic, and there is no mod() to offer instead.
        const hint = any.op === '%' ? ' (write a percentage as /100)' : '';
        throw new FormulaError(`the operator "${String(any.op)}" is not allowed${hint}`);
      }
      case 'FunctionNode': {
        const fnNode = any.fn as MathNode;
        if (fnNode.type !== 'SymbolNode') throw new FormulaError('only named functions may be called');
        const name = (fnNode as unknown as { name: string }).name;
        const spec = formulaFunction(name);
        if (!spec) throw new FormulaError(`the function "${name}" is not allowed`);
        const argNodes = any.args as MathNode[];
        const countProblem = argumentCountProblem(name, spec, argNodes.length);
        if (countProblem) throw new FormulaError(countProblem);
        if (spec.crossRow) {
          const target = argNodes[0]!;
          const colName = target.type === 'SymbolNode' ? (target as unknown as { name: string }).name : undefined;
          const kind = colName ? symbols.get(colName) : undefined;
          if (!colName || !kind) throw new FormulaError(`${name}() takes the name of a column, got "${target.toString()}"`);
          deps.add(colName);
          const which = spec.crossRow;
          return (ctx) => {
            const links = which === 'parent' ? ctx.parentRow : ctx.pairRow;
            const read = columnReader(ctx, colName, kind);
            return (r) => {
              const other = links[r]!;
              return other < 0 ? NaN : read(other);
            };
          };
        }
        const args = argNodes.map((a) => build(a, depth + 1));
        const evaluate = spec.evaluate!;
        const rule = spec.empty;
        return (ctx) => {
          const fs = args.map((f) => f(ctx));
          const k = fs.length;
          // One argument list per call site, refilled for every row (no array per row).
          // Safe: arguments are evaluated before the call, and no function keeps the list.
          const argv: Value[] = new Array(k);
          // The function's rule for empty inputs, applied before it is asked (as its spreadsheet form does).
          const emptied = emptinessTest(rule, argv);
          return (r) => {
            for (let i = 0; i < k; i++) argv[i] = fs[i]!(r);
            return emptied() ? NaN : evaluate(argv);
          };
        };
      }
      default:
        throw new FormulaError(`${describeNode(n.type)} is not allowed in a formula`);
    }
  };
  const root = build(node, 0);
  return { name: def.name, expr: def.expr, node, dependencies: [...deps], bind: (ctx) => root(ctx) };
}

function columnReader(ctx: EvalContext, name: string, kind: SymbolKind): RowFn {
  if (kind === 'number') {
    const col = ctx.number(name);
    if (!col) return () => NaN;
    return (r) => col[r]!;
  }
  const col = ctx.text(name);
  if (!col) return () => '';
  return (r) => col[r] ?? '';
}

function describeNode(type: string): string {
  const words: Record<string, string> = {
    AssignmentNode: 'assignment (=)',
    FunctionAssignmentNode: 'defining a function',
    BlockNode: 'a block of several statements (; or newline)',
    AccessorNode: 'property or index access (. or [])',
    IndexNode: 'property or index access (. or [])',
    ObjectNode: 'an object literal ({})',
    ArrayNode: 'a matrix or list ([])',
    RangeNode: 'a range (:)',
    RelationalNode: 'a chained comparison (a < b < c)',
  };
  return words[type] ?? `a ${type}`;
}

function firstLine(text: string): string {
  return text.split('\n')[0]!.replace(/\.$/, '');
}
