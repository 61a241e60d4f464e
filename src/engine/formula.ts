import type { MathNode } from 'mathjs';
import { distributionRatio, extractionEfficiency, parseAcidBase } from '../chemistry/partition.js';
import { parseFormula } from './sandbox.js';

/**
 * Formula compilation: mathjs parses, we check the tree against an allow-list and
 * turn it into a tree of closures evaluated row by row over finished columns.
 * Nothing in a formula can define, load or evaluate code: only the node types
 * and functions listed here exist (DESIGN.md §3; LIBRARY-NOTES.md §1).
 *
 * Values are numbers or text. NaN is "empty": arithmetic on it gives NaN, a
 * comparison with it gives NaN, a conditional on it gives NaN.
 */
export type Value = number | string;
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

interface FnSpec {
  args: [min: number, max: number];
  /** Argument positions that take a column name for a cross-row look-up. */
  crossRow?: 'parent' | 'pair';
  call?: (a: Value[]) => Value;
}

const num = (v: Value): number => (typeof v === 'number' ? v : NaN);

/** The functions a formula may call, with the trade's names for our own. */
export const FUNCTIONS: Record<string, FnSpec> = {
  abs: { args: [1, 1], call: (a) => Math.abs(num(a[0]!)) },
  sqrt: { args: [1, 1], call: (a) => Math.sqrt(num(a[0]!)) },
  exp: { args: [1, 1], call: (a) => Math.exp(num(a[0]!)) },
  log: { args: [1, 2], call: (a) => (a.length === 2 ? Math.log(num(a[0]!)) / Math.log(num(a[1]!)) : Math.log(num(a[0]!))) },
  log10: { args: [1, 1], call: (a) => Math.log10(num(a[0]!)) },
  pow: { args: [2, 2], call: (a) => num(a[0]!) ** num(a[1]!) },
  min: { args: [1, 16], call: (a) => minMax(a, Math.min) },
  max: { args: [1, 16], call: (a) => minMax(a, Math.max) },
  round: {
    args: [1, 2],
    call: (a) => {
      const x = num(a[0]!);
      const d = a.length === 2 ? num(a[1]!) : 0;
      const f = 10 ** d;
      return Math.sign(x) * Math.round(Math.abs(x) * f) / f;
    },
  },
  floor: { args: [1, 1], call: (a) => Math.floor(num(a[0]!)) },
  ceil: { args: [1, 1], call: (a) => Math.ceil(num(a[0]!)) },
  if_empty: { args: [2, 2], call: (a) => (isEmpty(a[0]!) ? a[1]! : a[0]!) },
  distribution_ratio: {
    args: [4, 4],
    call: (a) => {
      const acidBase = parseAcidBase(typeof a[3] === 'string' ? a[3] : '');
      return acidBase ? distributionRatio(num(a[0]!), num(a[1]!), num(a[2]!), acidBase) : NaN;
    },
  },
  extraction_efficiency: { args: [4, 4], call: (a) => extractionEfficiency(num(a[0]!), num(a[1]!), num(a[2]!), num(a[3]!)) },
  recovery_pct: { args: [3, 3], call: (a) => recoveryPct(num(a[0]!), num(a[1]!), num(a[2]!)) },
  rpd_pct: { args: [2, 2], call: (a) => rpdPct(num(a[0]!), num(a[1]!)) },
  parent: { args: [1, 1], crossRow: 'parent' },
  pair: { args: [1, 1], crossRow: 'pair' },
};

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

function minMax(a: Value[], f: (...x: number[]) => number): number {
  const xs = a.map(num);
  return xs.some(Number.isNaN) ? NaN : f(...xs);
}

function isEmpty(v: Value): boolean {
  return typeof v === 'number' ? Number.isNaN(v) : v.trim() === '';
}

const BINARY: Record<string, (x: Value, y: Value) => Value> = {
  add: (x, y) => num(x) + num(y),
  subtract: (x, y) => num(x) - num(y),
  multiply: (x, y) => num(x) * num(y),
  divide: (x, y) => num(x) / num(y),
  pow: (x, y) => num(x) ** num(y),
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
          if (Object.hasOwn(FUNCTIONS, name)) throw new FormulaError(`"${name}" is a function; call it with arguments`);
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
        const spec = Object.prototype.hasOwnProperty.call(FUNCTIONS, name) ? FUNCTIONS[name] : undefined;
        if (!spec) throw new FormulaError(`the function "${name}" is not allowed`);
        const argNodes = any.args as MathNode[];
        const [min, max] = spec.args;
        if (argNodes.length < min || argNodes.length > max) {
          const want = min === max ? `${min}` : `${min} to ${max}`;
          throw new FormulaError(`${name}() takes ${want} argument${max === 1 ? '' : 's'}, got ${argNodes.length}`);
        }
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
        const call = spec.call!;
        return (ctx) => {
          const fs = args.map((f) => f(ctx));
          const k = fs.length;
          // One argument list per call site, refilled for every row (no array per row).
          // Safe: arguments are evaluated before the call, and no function keeps the list.
          const argv: Value[] = new Array(k);
          return (r) => {
            for (let i = 0; i < k; i++) argv[i] = fs[i]!(r);
            return call(argv);
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
