import { canonicalJson } from '../canonical-json.js';
import { gridIndices, gridSize, unitPoints } from '../samplers/index.js';
import type { Point } from '../schemas/records.js';
import { gridValues, type ListRange, type StepsRange, valueAt } from './ranges.js';
import type { SweepSpec } from './schema.js';

/** Names of the varied parameters in file order (the sampler's dimension order). */
export function variedNamesOf(spec: SweepSpec): string[] {
  return Object.keys(spec.vary);
}

/**
 * Number of points a spec asks for before duplicates are dropped: the grid
 * product, or `points` of a sampled sweep.
 */
export function requestedPointCount(spec: SweepSpec): number {
  if (spec.sampler.kind === 'grid') {
    return gridSize(Object.values(spec.vary).map((r) => gridValues(r as ListRange | StepsRange).length));
  }
  return spec.sampler.points;
}

/**
 * Every parameter point of a spec, lazily, in a fixed order: a grid in
 * odometer order (first varied parameter slowest); a sampled sweep in draw
 * order. Sampled points that repeat an earlier point (possible when every
 * varied parameter is discrete) are dropped, because equal points would be
 * equal jobs; the first occurrence keeps its place.
 */
export function* iteratePoints(sweep: { readonly spec: SweepSpec }): Generator<Point> {
  const { spec } = sweep;
  const names = variedNamesOf(spec);
  const ranges = names.map((n) => spec.vary[n]!);
  if (spec.sampler.kind === 'grid') {
    const values = ranges.map((r) => gridValues(r as ListRange | StepsRange));
    for (const index of gridIndices(values.map((v) => v.length))) {
      const point: Point = {};
      for (let d = 0; d < names.length; d++) point[names[d]!] = values[d]![index[d]!]!;
      yield point;
    }
    return;
  }
  // A point of a sampled sweep with no varied parameter is the one empty point.
  if (names.length === 0) {
    yield {};
    return;
  }
  const allContinuous = ranges.every((r) => 'between' in r && !r.integer);
  const seen = allContinuous ? undefined : new Set<string>();
  for (const u of unitPoints(spec.sampler.kind, spec.sampler.points, names.length, spec.seed)) {
    const point: Point = {};
    for (let d = 0; d < names.length; d++) point[names[d]!] = valueAt(ranges[d]!, u[d]!);
    if (seen !== undefined) {
      const id = canonicalJson(point);
      if (seen.has(id)) continue;
      seen.add(id);
    }
    yield point;
  }
}
