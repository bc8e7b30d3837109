import type { FieldIssue } from '../errors.js';
import { gridValues, type ListRange, type StepsRange } from '../sweep/ranges.js';
import type { SweepSpec } from '../sweep/schema.js';

/**
 * Checks of a `refine` section against the rest of the sweep: a grid sampler,
 * no top-level replicates (the section sets them), and numeric axes to
 * refine along. `rawHasReplicates`: the person wrote a top-level replicates.
 */
export function refineIssues(spec: SweepSpec, rawHasReplicates: boolean): FieldIssue[] {
  const refine = spec.refine;
  if (refine === undefined) return [];
  const issues: FieldIssue[] = [];
  if (rawHasReplicates) {
    issues.push({
      path: 'replicates',
      message:
        'replicates and refine cannot both be given: with refine, refine.replicates { start, max } sets the replicates of each point; remove the top-level replicates',
    });
  }
  if (spec.sampler.kind !== 'grid') {
    issues.push({
      path: 'refine',
      message: `refine needs sampler: { kind: grid } (a starting grid to refine), got ${spec.sampler.kind}`,
    });
    return issues;
  }
  for (const [i, name] of refineAxisNames(spec).entries()) {
    const path = refine.along === undefined ? 'refine' : `refine.along.${i}`;
    const range = spec.vary[name];
    if (range === undefined) {
      issues.push({ path, message: `"${name}" is not a varied parameter; refine.along names parameters under vary` });
      continue;
    }
    const values = gridValues(range as ListRange | StepsRange);
    if (!values.every((v) => typeof v === 'number')) {
      issues.push({
        path,
        message: `"${name}" has values that are not numbers, so it has no midpoints to refine along`,
      });
    }
  }
  return issues;
}

/**
 * Parameters midpoints are inserted along: refine.along, else report.x when
 * set, else every varied parameter whose values are all numbers.
 */
export function refineAxisNames(spec: SweepSpec): string[] {
  if (spec.refine?.along !== undefined) return [...spec.refine.along];
  if (spec.report.x !== undefined) return [spec.report.x];
  return Object.entries(spec.vary)
    .filter(([, range]) => 'from' in range || ('list' in range && range.list.every((v) => typeof v === 'number')))
    .map(([name]) => name);
}
