import { createRequire } from 'node:module';
import type * as MathJs from 'mathjs';
import type { MathNode } from 'mathjs';

/**
 * The one mathjs instance phasebook uses, loaded once and hardened.
 *
 * Loaded from the single-file build (`mathjs/lib/browser/math.js`, listed in the
 * package's exports; the same version and code as the ESM entry). The ESM entry
 * evaluates about a thousand modules and creates every function on import, which
 * made it the largest part of phasebook's start-up: about four times the CPU
 * time of the single file (bench/README.md). Formula parsing and unit conversion
 * share this instance, so mathjs's type machinery is built once.
 *
 * Hardened as the mathjs security page advises
 * (https://mathjs.org/docs/expressions/security.html): `parse` is captured
 * first, then everything that defines, imports, parses or evaluates code is
 * replaced by a function that throws. phasebook only ever parses method formulas
 * (engine/sandbox.ts); evaluation is our own walk over an allow-listed tree
 * (engine/formula.ts), so no mathjs function is reachable from a formula.
 *
 * Import mathjs through this module, never `from 'mathjs'` at run time (type
 * imports are free).
 */
const require = createRequire(import.meta.url);
const math = require('mathjs/lib/browser/math.js') as MathJs.MathJsInstance;

math.config({ predictable: true });
const capturedParse = math.parse;

const disabled = (name: string) => () => {
  throw new Error(`function ${name} is disabled`);
};
math.import(
  {
    import: disabled('import'),
    createUnit: disabled('createUnit'),
    reviver: disabled('reviver'),
    evaluate: disabled('evaluate'),
    parse: disabled('parse'),
    compile: disabled('compile'),
    simplify: disabled('simplify'),
    derivative: disabled('derivative'),
    resolve: disabled('resolve'),
  },
  { override: true },
);

/** Parse an expression into a syntax tree; nothing is evaluated. */
export function parseExpression(expr: string): MathNode {
  return capturedParse(expr);
}

/** A mathjs unit, for conversion factors (columns/units.ts). */
export const unit: MathJs.MathJsInstance['unit'] = math.unit;

/** Syntax-tree node classes, for code that builds trees (e.g. a formula translated for a spreadsheet). */
export const mathNodes = {
  ConstantNode: math.ConstantNode,
  SymbolNode: math.SymbolNode,
  FunctionNode: math.FunctionNode,
  OperatorNode: math.OperatorNode,
  ParenthesisNode: math.ParenthesisNode,
  ConditionalNode: math.ConditionalNode,
};
