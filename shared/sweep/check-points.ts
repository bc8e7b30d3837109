import { type FieldIssue, issuesFromZod, shorten, type ZodIssueLike } from '../errors.js';
import { checkDefaultsRead, type DerivedSetup, derivePoint, WHOLE_NUMBER_HINT } from '../formula/derive-point.js';
import type { AnyModel } from '../model.js';
import { gridSize } from '../samplers/grid.js';
import { samplerFor } from '../samplers/index.js';
import type { Point } from '../schemas/records.js';
import { countValues } from './document-limits.js';
import { CHECKED_POINTS, MIN_CHECKED_POINTS } from './limits.js';
import { gridAxes, type HasSpec, iteratePoints, pointsAtPositions, spreadPositions, variedNamesOf } from './points.js';

/** Failing points whose issues are listed; the rest are counted. */
const SHOWN_POINTS = 5;

export interface PointCheck {
  /** Points run through the model's schema. */
  readonly checked: number;
  readonly issues: FieldIssue[];
}

function describePoint(point: Point): string {
  const parts = Object.entries(point).map(([k, v]) => `${k}=${shorten(JSON.stringify(v), 40)}`);
  return parts.length === 0 ? 'the only point' : parts.join(', ');
}

/**
 * How many points to check: CHECKED_POINTS for an ordinary `fixed`, fewer
 * when `fixed` is large (explicit sequences, say), because every check
 * parses all of it again.
 */
export function checkBudget(sweep: HasSpec): number {
  const size = countValues(sweep.spec.fixed) + variedNamesOf(sweep.spec).length;
  return Math.max(MIN_CHECKED_POINTS, Math.floor((CHECKED_POINTS * 64) / Math.max(64, size)));
}

function positionOf(sizes: readonly number[], index: readonly number[]): number {
  let position = 0;
  for (let d = 0; d < sizes.length; d++) position = position * sizes[d]! + index[d]!;
  return position;
}

/**
 * Positions of a large grid worth checking, about `budget` of them: its
 * first points; points spread evenly over the whole grid; the corners
 * (every combination of each parameter's smallest, largest, first and last
 * value), where rules like "a + b <= c" fail first; and, through the first
 * and the last point, each parameter run along its values.
 */
function gridCheckPositions(sweep: HasSpec, budget: number): number[] {
  const axes = gridAxes(sweep.spec);
  const sizes = axes.map((a) => a.size);
  const total = gridSize(sizes);
  const share = Math.max(1, Math.floor(budget / 4));
  const chosen = new Set<number>();
  for (let p = 0; p < Math.min(share, total); p++) chosen.add(p);
  for (const p of spreadPositions(total, share)) chosen.add(p);

  const extremes = axes.map((axis) => {
    const picks = new Set<number>([0, axis.size - 1]);
    if (axis.lowest >= 0) picks.add(axis.lowest);
    if (axis.highest >= 0) picks.add(axis.highest);
    return [...picks];
  });
  const corner = extremes.map(() => 0);
  for (let added = 0; added < share; added++) {
    chosen.add(
      positionOf(
        sizes,
        corner.map((c, d) => extremes[d]![c]!),
      ),
    );
    let d = corner.length - 1;
    while (d >= 0 && corner[d]! + 1 >= extremes[d]!.length) corner[d--] = 0;
    if (d < 0) break;
    corner[d]! += 1;
  }

  const perLine = Math.max(2, Math.floor(share / Math.max(1, 2 * sizes.length)));
  for (const base of [sizes.map(() => 0), sizes.map((n) => n - 1)]) {
    sizes.forEach((n, d) => {
      for (const i of [...spreadPositions(n, perLine), n - 1]) {
        const index = base.slice();
        index[d] = i;
        chosen.add(positionOf(sizes, index));
      }
    });
  }
  return [...chosen].sort((a, b) => a - b);
}

/** The points to check, with their positions in iteratePoints order. */
function* pointsToCheck(
  sweep: HasSpec,
  pointCount: number,
  budget: number,
  leading: readonly Point[],
): Generator<[number, Point]> {
  if (samplerFor(sweep.spec.sampler.kind).needsPoints && leading.length >= Math.min(budget, pointCount)) {
    // The first draws, already at hand (drawn points are spread over the space from the start).
    for (let i = 0; i < Math.min(budget, leading.length); i++) yield [i, leading[i]!];
    return;
  }
  if (pointCount <= budget || samplerFor(sweep.spec.sampler.kind).needsPoints) {
    // Every point, or the first `budget` draws.
    let position = 0;
    for (const point of iteratePoints(sweep)) {
      if (position >= budget) return;
      yield [position++, point];
    }
    return;
  }
  yield* pointsAtPositions(sweep, gridCheckPositions(sweep, budget));
}

/** A sweep to check: its spec and its compiled computed parameters, if any. */
export interface CheckedSweep extends HasSpec {
  readonly derived?: DerivedSetup | undefined;
}

/** Where an issue of the model's schema belongs in the sweep file, and its message with a hint. */
function placeIssue(
  sweep: HasSpec,
  point: Point,
  computed: Readonly<Record<string, number>>,
  issue: ZodIssueLike & { expected?: string },
): ZodIssueLike {
  const head = issue.path[0] === undefined ? undefined : String(issue.path[0]);
  const isComputed = head !== undefined && Object.hasOwn(computed, head);
  const where =
    head === undefined
      ? 'params'
      : Object.hasOwn(point, head)
        ? `vary.${head}`
        : Object.hasOwn(sweep.spec.fixed, head)
          ? `fixed.${head}`
          : isComputed
            ? `derived.${head}`
            : `params.${head}`;
  let message = issue.message;
  const range = head === undefined ? undefined : sweep.spec.vary[head];
  const wholeNumber = issue.code === 'invalid_type' && issue.expected === 'int';
  if (isComputed) {
    message = `the formula gives ${computed[head]}; ${message}${wholeNumber ? ` (${WHOLE_NUMBER_HINT})` : ''}`;
  } else if (wholeNumber) {
    message +=
      range !== undefined && 'between' in range
        ? ' (this parameter takes whole numbers: add integer: true)'
        : ' (this parameter takes whole numbers)';
  }
  return { path: [where, ...issue.path.slice(1)], message };
}

/** Problems of one point: its computed parameters, then the model's schema on everything. */
function pointIssues(sweep: CheckedSweep, model: AnyModel, point: Point): FieldIssue[] {
  let input: Record<string, unknown> = { ...sweep.spec.fixed, ...point };
  let computed: Readonly<Record<string, number>> = {};
  if (sweep.derived !== undefined) {
    const d = derivePoint(sweep.derived, sweep.spec.fixed, point);
    if (!d.success) return [{ path: `derived.${d.name}`, message: d.message }];
    input = d.input;
    computed = d.computed;
  }
  const result = model.params.safeParse(input);
  if (result.success) {
    const wrongDefault =
      sweep.derived === undefined
        ? undefined
        : checkDefaultsRead(sweep.derived, result.data as Record<string, unknown>);
    return wrongDefault === undefined ? [] : [{ path: `derived.${wrongDefault.name}`, message: wrongDefault.message }];
  }
  return issuesFromZod(result.error.issues.map((issue: ZodIssueLike) => placeIssue(sweep, point, computed, issue)));
}

/**
 * Run points (the model's defaults + `fixed` + the point's values + the
 * computed parameters) through the model's own schema, so cross-field rules
 * fail before any job exists. Every point of a sweep with up to
 * CHECKED_POINTS points is checked; a larger one has a fixed selection
 * checked (its first points, an even spread, the corners of a grid), which
 * bounds the time a file takes to load. Reports the first few failing
 * points, each issue at the field it concerns.
 */
export function checkPoints(
  sweep: CheckedSweep,
  model: AnyModel,
  pointCount: number,
  leading: readonly Point[] = [],
): PointCheck {
  // One problem found at many points (a bad fixed value fails every point) is
  // one issue: grouped by field and message, told once with its first point.
  const groups = new Map<string, { issue: FieldIssue; position: number; point: Point; count: number }>();
  let checked = 0;
  let failing = 0;
  // Failing points with a problem beyond those of the first SHOWN_POINTS failing points.
  let untold = 0;
  for (const [position, point] of pointsToCheck(sweep, pointCount, checkBudget(sweep), leading)) {
    checked++;
    const found = pointIssues(sweep, model, point);
    if (found.length === 0) continue;
    failing++;
    let hidden = false;
    for (const issue of found) {
      const key = `${issue.path}\u0000${issue.message}`;
      const group = groups.get(key);
      if (group !== undefined) group.count++;
      else if (failing <= SHOWN_POINTS) groups.set(key, { issue, position, point, count: 1 });
      else hidden = true;
    }
    if (hidden) untold++;
  }
  const issues: FieldIssue[] = [];
  for (const { issue, position, point, count } of groups.values()) {
    const where =
      count === checked
        ? checked === 1
          ? ''
          : checked === pointCount
            ? `at every point: `
            : `at every point checked: `
        : `at point ${position + 1} (${describePoint(point)})${count > 1 ? ` and ${count - 1} more` : ''}: `;
    issues.push({ path: issue.path, message: `${where}${issue.message}` });
  }
  if (untold > 0) {
    const of =
      checked === pointCount
        ? `${failing} of ${pointCount} points`
        : `${failing} of the ${checked} points checked (of ${pointCount})`;
    issues.push({
      path: 'vary',
      message: `${of} are invalid for model ${model.id}; the problems of the first ${SHOWN_POINTS} are shown`,
    });
  }
  return { checked, issues };
}
