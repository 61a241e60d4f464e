import type { MathNode } from 'mathjs';
import { parseExpression } from '../mathjs.js';

/**
 * Formulas meet mathjs only here, and only its parser: the instance is hardened
 * in ../mathjs.ts (nothing that defines, imports, parses or evaluates code is
 * reachable), and evaluation is our own walk over an allow-listed tree
 * (formula.ts).
 */
export function parseFormula(expr: string): MathNode {
  return parseExpression(expr);
}
