import { didYouMean } from '../closest-names.js';
import type { FieldIssue } from '../errors.js';
import { evaluateFormula, type FormulaScope } from './evaluate-formula.js';
import { formulaOrder } from './formula-order.js';
import { type FormulaNode, namesUsed } from './formula-tree.js';
import { parseFormula } from './parse-formula.js';
import { printFormula } from './print-formula.js';

/**
 * Computed parameters: a map from parameter name to formula, compiled once
 * per sweep (parsed, names checked, ordered) and evaluated once per point.
 */

export interface CompiledFormula {
  readonly name: string;
  readonly tree: FormulaNode;
  /** Normalised text (printFormula): what identifies the formula. */
  readonly normalised: string;
  /** Parameter names the formula reads. */
  readonly uses: readonly string[];
}

export interface CompiledDerived {
  /** In evaluation order: every formula after the computed parameters it reads. */
  readonly formulas: readonly CompiledFormula[];
  /** Name -> normalised formula, in file order. */
  readonly normalised: Readonly<Record<string, string>>;
}

export interface DerivedContext {
  /** Every parameter name of the model. */
  readonly known: readonly string[];
  /** Names set in `fixed`. */
  readonly fixed: readonly string[];
  /** Names in `vary`. */
  readonly varied: readonly string[];
}

export type CompileResult =
  | { readonly success: true; readonly derived: CompiledDerived }
  | { readonly success: false; readonly issues: readonly FieldIssue[] };

function closeNameHint(name: string, known: readonly string[]): string {
  const hint = didYouMean(name, known);
  return hint === undefined ? '' : `; ${hint}`;
}

/** Parse every formula, check its names, and order them. Reports every problem found. */
export function compileDerived(raw: Readonly<Record<string, string>>, context: DerivedContext): CompileResult {
  const issues: FieldIssue[] = [];
  const known = new Set(context.known);
  const fixed = new Set(context.fixed);
  const varied = new Set(context.varied);
  const parsed = new Map<string, CompiledFormula>();
  for (const [name, text] of Object.entries(raw)) {
    const path = `derived.${name}`;
    if (!known.has(name)) {
      issues.push({ path, message: `unknown parameter "${name}"${closeNameHint(name, context.known)}` });
      continue;
    }
    if (fixed.has(name) || varied.has(name)) {
      issues.push({
        path,
        message: `"${name}" is computed and also ${fixed.has(name) ? 'fixed' : 'varied'}; keep it in one of derived, ${fixed.has(name) ? 'fixed' : 'vary'}`,
      });
      continue;
    }
    const result = parseFormula(text);
    if (!result.success) {
      issues.push({ path, message: result.message });
      continue;
    }
    const uses = namesUsed(result.tree);
    const unknown = uses.filter((u) => !known.has(u));
    if (unknown.length > 0) {
      for (const u of unknown) {
        issues.push({ path, message: `unknown name "${u}" in the formula${closeNameHint(u, context.known)}` });
      }
      continue;
    }
    parsed.set(name, { name, tree: result.tree, normalised: printFormula(result.tree), uses });
  }
  if (issues.length > 0) return { success: false, issues };

  const order = formulaOrder(new Map([...parsed].map(([name, f]) => [name, f.uses])));
  if (!order.success) {
    return {
      success: false,
      issues: [
        {
          path: `derived.${order.cycle[0]}`,
          message: `computed parameters form a cycle: ${order.cycle.join(' -> ')}`,
        },
      ],
    };
  }
  const normalised: Record<string, string> = {};
  for (const [name, f] of parsed) normalised[name] = f.normalised;
  return { success: true, derived: { formulas: order.order.map((n) => parsed.get(n)!), normalised } };
}

export type DerivedValues =
  | { readonly success: true; readonly values: Readonly<Record<string, number>> }
  | { readonly success: false; readonly name: string; readonly message: string };

/**
 * Evaluate every formula at one point. `inputs` holds what the formulas may
 * read: the model's defaults, then `fixed`, then the point's values. A
 * computed value becomes readable by the formulas after it.
 */
export function evaluateDerived(derived: CompiledDerived, inputs: Readonly<Record<string, unknown>>): DerivedValues {
  const values: Record<string, number> = {};
  const scope: FormulaScope = (name) => {
    if (Object.hasOwn(values, name)) return { value: values[name]! };
    if (!Object.hasOwn(inputs, name) || inputs[name] === undefined) {
      return {
        missing: `"${name}" has no value here (its default depends on other parameters); set it in fixed, vary or derived`,
      };
    }
    const value = inputs[name];
    if (typeof value !== 'number') return { missing: `"${name}" is not a number here (${JSON.stringify(value)})` };
    return { value };
  };
  for (const formula of derived.formulas) {
    const result = evaluateFormula(formula.tree, scope);
    if (!result.success) return { success: false, name: formula.name, message: result.message };
    values[formula.name] = result.value;
  }
  return { success: true, values };
}
