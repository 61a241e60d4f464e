import { create, all, type MathNode } from 'mathjs';

/**
 * The one mathjs instance formulas meet, hardened as the mathjs security page
 * advises (https://mathjs.org/docs/expressions/security.html): `parse` is
 * captured first, then everything that defines, imports, parses or evaluates
 * code is replaced by a function that throws. phasebook only ever *parses*
 * method formulas with it; evaluation is our own walk over an allow-listed
 * tree (formula.ts), so no mathjs function is reachable from a formula.
 */
const math = create(all, { predictable: true });
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

/** Parse a formula into a mathjs syntax tree (no evaluation happens here). */
export function parseFormula(expr: string): MathNode {
  return capturedParse(expr);
}
