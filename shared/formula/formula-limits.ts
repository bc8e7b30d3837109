/**
 * Bounds on a formula, checked before and while parsing, so that a hostile
 * text (100 kB of operators, thousands of nested parentheses) is refused at
 * once with a message instead of exhausting the stack or the CPU.
 */
export const FORMULA_LIMITS = {
  /** Characters of formula text. */
  maxLength: 1000,
  /** Parentheses open at once. */
  maxParentheses: 32,
  /** Levels of the syntax tree (operators inside operators). */
  maxDepth: 64,
} as const;
