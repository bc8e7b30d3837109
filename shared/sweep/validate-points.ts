import type { FieldIssue } from '../errors.js';
import { checkDefaultsRead, type DerivedSetup, derivePoint, WHOLE_NUMBER_HINT } from '../formula/derive-point.js';
import type { AnyModel } from '../model.js';
import type { Point } from '../schemas/records.js';
import type { SweepSpec } from './schema.js';

const SHOWN_POINTS = 5;

export interface PointCheck {
  readonly pointCount: number;
  readonly issues: FieldIssue[];
}

function describePoint(point: Point): string {
  const parts = Object.entries(point).map(([k, v]) => `${k}=${JSON.stringify(v)}`);
  return parts.length === 0 ? 'the only point' : parts.join(', ');
}

/**
 * Run every point (defaults + fixed + the point's values) through the
 * model's own schema, so cross-field rules fail before any job exists.
 * Computed parameters (`derived`) are evaluated first and checked like the
 * rest, each problem at `derived.<name>`.
 * Reports the first few failing points, each issue at the field it concerns.
 */
export function validatePoints(
  spec: SweepSpec,
  model: AnyModel,
  points: Iterable<Point>,
  derived?: DerivedSetup,
): PointCheck {
  const issues: FieldIssue[] = [];
  let pointCount = 0;
  let failing = 0;
  for (const point of points) {
    pointCount++;
    const at = (): string => `at point ${pointCount} (${describePoint(point)})`;
    let input: Record<string, unknown> = { ...spec.fixed, ...point };
    let computed: Readonly<Record<string, number>> = {};
    if (derived !== undefined) {
      const d = derivePoint(derived, spec.fixed, point);
      if (!d.success) {
        failing++;
        if (failing <= SHOWN_POINTS) issues.push({ path: `derived.${d.name}`, message: `${at()}: ${d.message}` });
        continue;
      }
      input = d.input;
      computed = d.computed;
    }
    const result = model.params.safeParse(input);
    if (result.success) {
      const wrongDefault = derived === undefined ? undefined : checkDefaultsRead(derived, result.data);
      if (wrongDefault === undefined) continue;
      failing++;
      if (failing <= SHOWN_POINTS) {
        issues.push({ path: `derived.${wrongDefault.name}`, message: `${at()}: ${wrongDefault.message}` });
      }
      continue;
    }
    failing++;
    if (failing > SHOWN_POINTS) continue;
    for (const issue of result.error.issues) {
      const head = issue.path[0] === undefined ? undefined : String(issue.path[0]);
      const rest = issue.path.slice(1).map(String);
      const isComputed = head !== undefined && Object.hasOwn(computed, head);
      const where =
        head === undefined
          ? 'params'
          : Object.hasOwn(point, head)
            ? `vary.${head}`
            : Object.hasOwn(spec.fixed, head)
              ? `fixed.${head}`
              : isComputed
                ? `derived.${head}`
                : `params.${head}`;
      const path = [where, ...rest].join('.');
      let message = issue.message;
      const range = head === undefined ? undefined : spec.vary[head];
      const wholeNumber = issue.code === 'invalid_type' && (issue as { expected?: string }).expected === 'int';
      if (isComputed) {
        message = `the formula gives ${computed[head]}; ${message}${wholeNumber ? ` (${WHOLE_NUMBER_HINT})` : ''}`;
      } else if (wholeNumber) {
        message +=
          range !== undefined && 'between' in range
            ? ' (this parameter takes whole numbers: add integer: true)'
            : ' (this parameter takes whole numbers)';
      }
      issues.push({ path, message: `${at()}: ${message}` });
    }
  }
  if (failing > SHOWN_POINTS) {
    issues.push({
      path: 'vary',
      message: `${failing} of ${pointCount} points are invalid for model ${model.id}; the first ${SHOWN_POINTS} are shown`,
    });
  }
  return { pointCount, issues };
}
