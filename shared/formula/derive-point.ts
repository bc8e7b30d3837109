import type { CompiledDerived } from './derived-params.js';
import { evaluateDerived } from './derived-params.js';

/**
 * Computed parameters at one point of a sweep. The formulas read the
 * model's defaults, then `fixed`, then the point's values; their results
 * join the model's input next to `fixed` and the point, so the model's
 * schema checks them like any other value.
 */

export interface DerivedSetup {
  readonly compiled: CompiledDerived;
  /** The model's parameters with nothing set (`params.parse({})`). */
  readonly defaults: Readonly<Record<string, unknown>>;
  /** Names the formulas read that are neither fixed, varied nor computed: they read a default. */
  readonly readsDefaults: readonly string[];
}

export function derivedSetup(
  compiled: CompiledDerived,
  defaults: Readonly<Record<string, unknown>>,
  fixed: readonly string[],
  varied: readonly string[],
): DerivedSetup {
  const given = new Set([...fixed, ...varied, ...compiled.formulas.map((f) => f.name)]);
  const reads = new Set<string>();
  for (const f of compiled.formulas) for (const name of f.uses) if (!given.has(name)) reads.add(name);
  return { compiled, defaults, readsDefaults: [...reads] };
}

export type DerivedInput =
  | {
      readonly success: true;
      /** `fixed`, the point and the computed values: the model's input. */
      readonly input: Record<string, unknown>;
      readonly computed: Readonly<Record<string, number>>;
    }
  | { readonly success: false; readonly name: string; readonly message: string };

/** The model's input at one point: fixed + point + computed values. */
export function derivePoint(
  setup: DerivedSetup,
  fixed: Readonly<Record<string, unknown>>,
  point: Readonly<Record<string, unknown>>,
): DerivedInput {
  const result = evaluateDerived(setup.compiled, { ...setup.defaults, ...fixed, ...point });
  if (!result.success) return result;
  return { success: true, input: { ...fixed, ...point, ...result.values }, computed: result.values };
}

/**
 * A default a formula read must be the value the model resolved at this
 * point. It differs when the default itself depends on other parameters
 * (hypercolumns follows `sequences`); the formula would then have computed
 * with a number the job never uses.
 */
export function checkDefaultsRead(
  setup: DerivedSetup,
  resolved: Readonly<Record<string, unknown>>,
): { readonly name: string; readonly message: string } | undefined {
  for (const read of setup.readsDefaults) {
    const used = setup.defaults[read];
    if (resolved[read] === used) continue;
    const formula = setup.compiled.formulas.find((f) => f.uses.includes(read))!;
    return {
      name: formula.name,
      message: `the formula read ${read} = ${JSON.stringify(used)} (the model's default), but the model resolves ${read} to ${JSON.stringify(resolved[read])} here; set ${read} in fixed or vary`,
    };
  }
  return undefined;
}

/** Appended to the model's message when a computed count is fractional. */
export const WHOLE_NUMBER_HINT = 'the formula must give a whole number: wrap it in round(), floor() or ceil()';
