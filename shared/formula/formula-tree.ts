/**
 * The syntax tree of a formula, after the whitelist check. It is our own
 * small type, not the parser's: nothing outside this union can reach the
 * evaluator, so a construct the parser knows but the language does not
 * (property access, strings, assignment) has no way in.
 */

export type ArithmeticOperator = '+' | '-' | '*' | '/' | '%' | '^';
export type ComparisonOperator = '<' | '<=' | '>' | '>=' | '==' | '!=';

export type FormulaNode =
  | { readonly kind: 'number'; readonly value: number }
  | { readonly kind: 'name'; readonly name: string }
  | { readonly kind: 'negate'; readonly operand: FormulaNode }
  | {
      readonly kind: 'arithmetic';
      readonly operator: ArithmeticOperator;
      readonly left: FormulaNode;
      readonly right: FormulaNode;
    }
  | {
      readonly kind: 'comparison';
      readonly operator: ComparisonOperator;
      readonly left: FormulaNode;
      readonly right: FormulaNode;
    }
  | {
      readonly kind: 'conditional';
      readonly test: FormulaNode;
      readonly whenTrue: FormulaNode;
      readonly whenFalse: FormulaNode;
    }
  | { readonly kind: 'call'; readonly fn: string; readonly args: readonly FormulaNode[] };

/** Every parameter name a formula reads, in order of first use. */
export function namesUsed(node: FormulaNode, into: string[] = []): string[] {
  switch (node.kind) {
    case 'number':
      break;
    case 'name':
      if (!into.includes(node.name)) into.push(node.name);
      break;
    case 'negate':
      namesUsed(node.operand, into);
      break;
    case 'arithmetic':
    case 'comparison':
      namesUsed(node.left, into);
      namesUsed(node.right, into);
      break;
    case 'conditional':
      namesUsed(node.test, into);
      namesUsed(node.whenTrue, into);
      namesUsed(node.whenFalse, into);
      break;
    case 'call':
      for (const arg of node.args) namesUsed(arg, into);
      break;
  }
  return into;
}
