import type { z } from 'zod';
import type { AnyModel } from '../model.js';
import type { Point } from '../schemas/records.js';
import { gridValues, type Range } from '../sweep/ranges.js';
import { type DerivedSetup, derivePoint, WHOLE_NUMBER_HINT } from './derive-point.js';

/**
 * Checking computed parameters at every point of a large grid without
 * visiting every point. A formula's value depends only on the varied
 * parameters it reads (directly, or through computed parameters it reads),
 * so evaluating it at every combination of their values covers every point
 * of a grid: `weightGain: "10 / hypercolumns"` over a 5 x 1,000,000 grid
 * needs 5 evaluations. Each value is also checked against its own field of
 * the model's schema (whole numbers, ranges); rules between fields need the
 * whole point and are checked at the points the loader checks.
 */

/** Most combinations evaluated; beyond this only the checked points are. */
export const MAX_FORMULA_COMBINATIONS = 100_000;

/** Varied parameters the formulas read, directly or through other computed parameters, in `varied` order. */
export function variedInputs(setup: DerivedSetup, varied: readonly string[]): string[] {
  const reads = new Set<string>();
  for (const f of setup.compiled.formulas) for (const name of f.uses) reads.add(name);
  return varied.filter((name) => reads.has(name));
}

/**
 * Every combination of the grid values of `names` (odometer order, first
 * name slowest), or undefined when there are more than `budget`.
 */
export function gridCombinations(
  vary: Readonly<Record<string, Range>>,
  names: readonly string[],
  budget = MAX_FORMULA_COMBINATIONS,
): Point[] | undefined {
  const values = names.map((n) => {
    const range = vary[n];
    return range === undefined || 'between' in range || 'among' in range ? [] : gridValues(range);
  });
  let total = 1;
  for (const v of values) {
    total *= v.length;
    if (total > budget) return undefined;
  }
  const out: Point[] = [];
  const index = names.map(() => 0);
  for (let k = 0; k < total; k++) {
    const combination: Point = {};
    names.forEach((n, d) => {
      combination[n] = values[d]![index[d]!]!;
    });
    out.push(combination);
    for (let d = names.length - 1; d >= 0; d--) {
      index[d]! += 1;
      if (index[d]! < values[d]!.length) break;
      index[d] = 0;
    }
  }
  return out;
}

export interface FormulaFailure {
  readonly name: string;
  readonly message: string;
  /** The values it failed at (the varied parameters the formulas read). */
  readonly at: Point;
}

export interface FormulaCoverage {
  readonly checked: number;
  /** The first `keep` failures. */
  readonly failures: readonly FormulaFailure[];
  /** Combinations with a failure, in all. */
  readonly failing: number;
}

function fieldSchema(model: AnyModel, name: string): z.ZodType | undefined {
  const shape = (model.params as Partial<z.ZodObject>).shape as Record<string, z.ZodType> | undefined;
  return shape !== undefined && Object.hasOwn(shape, name) ? shape[name] : undefined;
}

/**
 * Evaluate every formula at each combination and check each value against
 * its field's own schema. `fixed` is the sweep's `fixed`; a combination
 * holds values of varied parameters only.
 */
export function checkFormulaCombinations(
  setup: DerivedSetup,
  model: AnyModel,
  fixed: Readonly<Record<string, unknown>>,
  combinations: Iterable<Point>,
  keep = 5,
): FormulaCoverage {
  const failures: FormulaFailure[] = [];
  let checked = 0;
  let failing = 0;
  const fields = new Map(setup.compiled.formulas.map((f) => [f.name, fieldSchema(model, f.name)]));
  for (const at of combinations) {
    checked++;
    const failure = checkOne(setup, fields, fixed, at);
    if (failure === undefined) continue;
    failing++;
    if (failures.length < keep) failures.push(failure);
  }
  return { checked, failures, failing };
}

function checkOne(
  setup: DerivedSetup,
  fields: ReadonlyMap<string, z.ZodType | undefined>,
  fixed: Readonly<Record<string, unknown>>,
  at: Point,
): FormulaFailure | undefined {
  const d = derivePoint(setup, fixed, at);
  if (!d.success) return { name: d.name, message: d.message, at };
  for (const [name, value] of Object.entries(d.computed)) {
    const result = fields.get(name)?.safeParse(value);
    if (result === undefined || result.success) continue;
    const issue = result.error.issues[0];
    const wholeNumber = issue?.code === 'invalid_type' && (issue as { expected?: string }).expected === 'int';
    const message = `the formula gives ${value}; ${issue?.message ?? 'the model refuses this value'}${wholeNumber ? ` (${WHOLE_NUMBER_HINT})` : ''}`;
    return { name, message, at };
  }
  return undefined;
}

/** "hypercolumns=25, minicolumns=100", or "every point" when the formulas read no varied parameter. */
export function describeInputs(at: Point): string {
  const parts = Object.entries(at).map(([k, v]) => `${k}=${JSON.stringify(v)}`);
  return parts.length === 0 ? 'every point' : parts.join(', ');
}
