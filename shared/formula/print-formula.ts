import type { FormulaNode } from './formula-tree.js';

/**
 * The normalised text of a formula: one space around each binary operator
 * and inside `? :`, ", " between arguments, numbers as JavaScript prints them
 * (1e3 -> 1000, 0.50 -> 0.5), and only the parentheses the meaning needs.
 * Two texts with the same tree print the same, so this is what identifies a
 * formula in the sweep hash; parsing the printed text gives the same tree.
 */

/** Binding strength, as the parser assigns it (higher binds tighter). */
const PRECEDENCE: Readonly<Record<string, number>> = {
  '==': 6,
  '!=': 6,
  '<': 7,
  '<=': 7,
  '>': 7,
  '>=': 7,
  '+': 9,
  '-': 9,
  '*': 10,
  '/': 10,
  '%': 10,
  '^': 11,
};
const CONDITIONAL = 1;
const NEGATE = 12;
const ATOM = 13;

function precedenceOf(node: FormulaNode): number {
  switch (node.kind) {
    case 'conditional':
      return CONDITIONAL;
    case 'arithmetic':
    case 'comparison':
      return PRECEDENCE[node.operator]!;
    case 'negate':
      return NEGATE;
    default:
      return ATOM;
  }
}

function wrap(text: string, needed: boolean): string {
  return needed ? `(${text})` : text;
}

export function printFormula(node: FormulaNode): string {
  switch (node.kind) {
    case 'number':
      return String(node.value);
    case 'name':
      return node.name;
    case 'negate':
      // -(-a), not --a; -(a + b) keeps its parentheses.
      return `-${wrap(printFormula(node.operand), precedenceOf(node.operand) <= NEGATE)}`;
    case 'arithmetic':
    case 'comparison': {
      const own = PRECEDENCE[node.operator]!;
      const rightAssociative = node.operator === '^';
      const left = precedenceOf(node.left);
      const right = precedenceOf(node.right);
      // A negated base of ^ is always parenthesised: the parser refuses -a ^ b.
      const leftNeeds = left < own || (left === own && rightAssociative) || (rightAssociative && left === NEGATE);
      const rightNeeds = right < own || (right === own && !rightAssociative);
      return `${wrap(printFormula(node.left), leftNeeds)} ${node.operator} ${wrap(printFormula(node.right), rightNeeds)}`;
    }
    case 'conditional':
      return `${wrap(printFormula(node.test), precedenceOf(node.test) <= CONDITIONAL)} ? ${wrap(printFormula(node.whenTrue), node.whenTrue.kind === 'conditional')} : ${printFormula(node.whenFalse)}`;
    case 'call':
      return `${node.fn}(${node.args.map(printFormula).join(', ')})`;
  }
}
