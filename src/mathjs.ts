import { createRequire } from 'node:module';
import type * as MathJs from 'mathjs';
import type { MathNode } from 'mathjs';

/**
 * mathjs, loaded once, fast, and hardened.
 *
 * - Loaded from the single-file build (`mathjs/lib/browser/math.js`, listed in
 *   the package's exports; the same version and code as the ESM entry). The ESM
 *   entry evaluates about a thousand modules and creates every function on
 *   import, which made it the largest part of phasebook's start-up: about four
 *   times the CPU time of the single file (bench/README.md).
 * - Formulas are parsed by an instance of their own whose `Unit` is a stand-in:
 *   the parser never needs units, and mathjs builds its whole unit system (a few
 *   hundred typed functions, most of the remaining start-up) as soon as a
 *   SymbolNode class is made, only to tell, when a tree is *evaluated*, whether
 *   a bare name is a unit. phasebook evaluates its own way (engine/formula.ts),
 *   so the parser instance has no units at all. Likewise `subset`, `size` and
 *   `matrix`, which the accessor, index and assignment node classes use only
 *   when mathjs itself evaluates a tree, are stand-ins there: building them
 *   (matrices, equality, addition, ...) was two thirds of what making the
 *   parser still cost. Unit conversion factors (columns/units.ts) use an
 *   instance of their own, whose unit system is built the first time a
 *   conversion is needed. There `pow` is the one mathjs uses for two numbers
 *   (what a unit's prefix and power need: `Unit` raises the unit's value times
 *   its prefix to the unit's power), and `fix`, `round` and `equal`, which
 *   `Unit` uses only to split a unit into parts or compare values, are
 *   stand-ins: building mathjs's own (matrices, inverses, fractions, ...) was
 *   most of what a run's first unit cost (issue 17.6). Any other use throws.
 * - Hardened as the mathjs security page advises
 *   (https://mathjs.org/docs/expressions/security.html): `parse` is captured
 *   first, then everything that defines, imports, parses or evaluates code is
 *   replaced, on both instances and in the namespace trees are evaluated in
 *   (`expression.mathWithTransform`), by a function that throws. The properties
 *   are replaced directly: `math.import(…, {override})` reads each old value
 *   first, which would build every one of those functions just to discard it.
 *
 * Import mathjs through this module, never `from 'mathjs'` at run time (type
 * imports are free).
 */
const require = createRequire(import.meta.url);
const defaultInstance = require('mathjs/lib/browser/math.js') as MathJs.MathJsInstance;
// An instance's own `create(config)` makes a new instance with every function (mathjs binds its factories to it).
const createInstance = defaultInstance.create as unknown as (config: MathJs.ConfigOptions) => MathJs.MathJsInstance;

const DISABLED = ['import', 'createUnit', 'reviver', 'evaluate', 'parse', 'compile', 'simplify', 'derivative', 'resolve'] as const;

function put(target: object, name: string, value: unknown): void {
  Object.defineProperty(target, name, { value, configurable: true, enumerable: true, writable: true });
}

function harden(math: MathJs.MathJsInstance): void {
  const withTransform = (math as unknown as { expression: { mathWithTransform: object } }).expression.mathWithTransform;
  for (const name of DISABLED) {
    const stub = () => {
      throw new Error(`function ${name} is disabled`);
    };
    put(math, name, stub);
    put(withTransform, name, stub);
  }
}

/** Stands in for mathjs's Unit in the parser instance: no name is a unit there. */
function NoUnit(): never {
  throw new Error('units are not available to formulas');
}
NoUnit.isValuelessUnit = (): boolean => false;

/** What only evaluating a tree with mathjs needs: stand-ins in the parser instance, which only parses. */
const EVALUATION_ONLY = ['subset', 'size', 'matrix'] as const;

const parser = createInstance({ predictable: true });
put(parser, 'Unit', NoUnit);
for (const name of EVALUATION_ONLY) {
  put(parser, name, () => {
    throw new Error(`${name} is not available to the formula parser`);
  });
}
const capturedParse = parser.parse;
harden(parser);

/** mathjs's `pow` for two numbers (function/arithmetic/pow.js, default config): Math.pow with its two infinity rules. */
function powOfNumbers(x: unknown, y: unknown): number {
  if (typeof x !== 'number' || typeof y !== 'number' || !(x >= 0 || Number.isInteger(y))) {
    throw new Error(`pow is only available to units for a number raised to a power, got ${typeof x} ${String(x)} and ${typeof y} ${String(y)}`);
  }
  if ((x * x < 1 && y === Infinity) || (x * x > 1 && y === -Infinity)) return 0;
  return Math.pow(x, y);
}

/** What `Unit` uses only to split a unit into parts or compare two values: stand-ins in the units instance. */
const SPLIT_OR_COMPARE_ONLY = ['fix', 'round', 'equal'] as const;

const units = createInstance({});
put(units, 'pow', powOfNumbers);
for (const name of SPLIT_OR_COMPARE_ONLY) {
  put(units, name, () => {
    throw new Error(`${name} is not available to unit conversion`);
  });
}
harden(units);

/** Parse an expression into a syntax tree; nothing is evaluated. */
export function parseExpression(expr: string): MathNode {
  return capturedParse(expr);
}

/** A mathjs unit, for conversion factors (columns/units.ts); the unit system is built on first use. */
export const unit = ((...args: unknown[]) => (units.unit as (...a: unknown[]) => MathJs.Unit)(...args)) as MathJs.MathJsInstance['unit'];
