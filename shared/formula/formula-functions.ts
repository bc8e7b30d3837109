/**
 * The functions a formula may call: the whole list. Each has a fixed number
 * of arguments (min and max take one or more), checked when the formula is
 * parsed, so a wrong call fails before any point is evaluated.
 */
export interface FormulaFunction {
  readonly minArgs: number;
  /** Infinity: any number of arguments from minArgs on. */
  readonly maxArgs: number;
  readonly apply: (args: readonly number[]) => number;
}

const one = (f: (x: number) => number): FormulaFunction => ({ minArgs: 1, maxArgs: 1, apply: (a) => f(a[0]!) });

/** A Map, not an object: a lookup of `constructor` or `__proto__` finds nothing. */
export const FORMULA_FUNCTIONS: ReadonlyMap<string, FormulaFunction> = new Map<string, FormulaFunction>([
  ['min', { minArgs: 1, maxArgs: Number.POSITIVE_INFINITY, apply: (a) => Math.min(...a) }],
  ['max', { minArgs: 1, maxArgs: Number.POSITIVE_INFINITY, apply: (a) => Math.max(...a) }],
  ['abs', one(Math.abs)],
  ['sqrt', one(Math.sqrt)],
  ['exp', one(Math.exp)],
  // Natural logarithm, as in most programming languages.
  ['log', one(Math.log)],
  ['log2', one(Math.log2)],
  ['log10', one(Math.log10)],
  ['floor', one(Math.floor)],
  ['ceil', one(Math.ceil)],
  // Halves go up (round(2.5) = 3, round(-2.5) = -2), as the overlap generator rounds.
  ['round', one(Math.round)],
  ['pow', { minArgs: 2, maxArgs: 2, apply: (a) => a[0]! ** a[1]! }],
]);

export const FORMULA_FUNCTION_NAMES: readonly string[] = [...FORMULA_FUNCTIONS.keys()];
