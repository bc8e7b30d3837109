import { FORMULA_FUNCTIONS } from './formula-functions.js';
import type { FormulaNode } from './formula-tree.js';
import { printFormula } from './print-formula.js';

/**
 * Evaluate a checked tree by walking it: no eval, no Function, and only the
 * operations listed here. Every intermediate value must be finite, so a
 * division by zero or log(0) is reported where it happens rather than
 * passing Infinity or NaN on to the model.
 */

export type FormulaValue =
  | { readonly success: true; readonly value: number }
  | { readonly success: false; readonly message: string };

/** The value of a parameter name, or a reason it has none. */
export type FormulaScope = (name: string) => { readonly value: number } | { readonly missing: string };

class EvaluationFailure extends Error {}

function finite(value: number, node: FormulaNode): number {
  if (!Number.isFinite(value)) {
    const what = Number.isNaN(value) ? 'not a number (NaN)' : value > 0 ? 'Infinity' : '-Infinity';
    throw new EvaluationFailure(
      `${printFormula(node)} gives ${what}; every value in a formula must be a finite number`,
    );
  }
  return value;
}

function arithmetic(operator: string, a: number, b: number): number {
  switch (operator) {
    case '+':
      return a + b;
    case '-':
      return a - b;
    case '*':
      return a * b;
    case '/':
      return a / b;
    case '%':
      // Remainder with the sign of the left side, as in most programming languages.
      return a % b;
    default:
      return a ** b;
  }
}

function compare(operator: string, a: number, b: number): boolean {
  switch (operator) {
    case '<':
      return a < b;
    case '<=':
      return a <= b;
    case '>':
      return a > b;
    case '>=':
      return a >= b;
    case '==':
      return a === b;
    default:
      return a !== b;
  }
}

function test(node: FormulaNode, scope: FormulaScope): boolean {
  if (node.kind !== 'comparison') throw new EvaluationFailure(`${printFormula(node)} is not a comparison`);
  return compare(node.operator, numberOf(node.left, scope), numberOf(node.right, scope));
}

function numberOf(node: FormulaNode, scope: FormulaScope): number {
  switch (node.kind) {
    case 'number':
      return node.value;
    case 'name': {
      const found = scope(node.name);
      if ('missing' in found) throw new EvaluationFailure(found.missing);
      return finite(found.value, node);
    }
    case 'negate':
      return -numberOf(node.operand, scope);
    case 'arithmetic':
      return finite(arithmetic(node.operator, numberOf(node.left, scope), numberOf(node.right, scope)), node);
    case 'comparison':
      throw new EvaluationFailure(`${printFormula(node)} is a comparison, not a number`);
    case 'conditional':
      return test(node.test, scope) ? numberOf(node.whenTrue, scope) : numberOf(node.whenFalse, scope);
    case 'call': {
      const fn = FORMULA_FUNCTIONS.get(node.fn);
      if (fn === undefined) throw new EvaluationFailure(`${node.fn}() is not a known function`);
      return finite(fn.apply(node.args.map((a) => numberOf(a, scope))), node);
    }
  }
}

/** The number a formula gives; never throws for a bad value, only reports it. */
export function evaluateFormula(tree: FormulaNode, scope: FormulaScope): FormulaValue {
  try {
    return { success: true, value: numberOf(tree, scope) };
  } catch (error) {
    if (error instanceof EvaluationFailure) return { success: false, message: error.message };
    throw error;
  }
}
