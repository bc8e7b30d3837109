import { gridIndexAt, gridIndices, gridSize } from '../samplers/grid.js';
import { type DrawingSampler, samplerFor } from '../samplers/index.js';
import type { Point } from '../schemas/records.js';
import { countDistinctDraws } from './count-draws.js';
import { dropsRepeats, pointIdentity } from './draw-identity.js';
import { type GridAxis, gridAxis, type ListRange, type Range, rangeSize, type StepsRange, valueAt } from './ranges.js';
import type { SweepSpec } from './schema.js';

/** Anything that carries a normalised spec (a loaded sweep, or a spec on its own as `{ spec }`). */
export interface HasSpec {
  readonly spec: SweepSpec;
}

/** Names of the varied parameters in file order (the sampler's dimension order). */
export function variedNamesOf(spec: SweepSpec): string[] {
  return Object.keys(spec.vary);
}

function rangesOf(spec: SweepSpec): Range[] {
  return variedNamesOf(spec).map((n) => spec.vary[n]!);
}

/** The axes of a product (grid) sweep, in file order. */
export function gridAxes(spec: SweepSpec): GridAxis[] {
  return rangesOf(spec).map((r) => gridAxis(r as ListRange | StepsRange));
}

/** The drawing sampler of a spec, or undefined for a product (grid) sweep. */
function drawingSampler(spec: SweepSpec): DrawingSampler | undefined {
  const sampler = samplerFor(spec.sampler.kind);
  return sampler.needsPoints ? sampler : undefined;
}

function drawnCount(spec: SweepSpec): number {
  return 'points' in spec.sampler ? spec.sampler.points : 0;
}

/**
 * Number of points a spec asks for before repeats are dropped: the product
 * of the range sizes, or `points` of a drawing sampler. Arithmetic only.
 */
export function requestedPointCount(spec: SweepSpec): number {
  if (drawingSampler(spec) === undefined) return gridSize(rangesOf(spec).map(rangeSize));
  return drawnCount(spec);
}

/**
 * Every parameter point of a spec, lazily, in a fixed order: a grid in
 * odometer order (first varied parameter slowest); a drawn sweep in draw
 * order. Drawn points that repeat an earlier point (possible when every
 * varied parameter is discrete) are dropped, because equal points would be
 * equal jobs; the first occurrence keeps its place.
 */
export function* iteratePoints(sweep: HasSpec): Generator<Point> {
  const { spec } = sweep;
  const names = variedNamesOf(spec);
  const ranges = rangesOf(spec);
  const sampler = drawingSampler(spec);
  if (sampler === undefined) {
    const axes = gridAxes(spec);
    for (const index of gridIndices(axes.map((a) => a.size))) {
      const point: Point = {};
      for (let d = 0; d < names.length; d++) point[names[d]!] = axes[d]!.at(index[d]!);
      yield point;
    }
    return;
  }
  // A point of a drawn sweep with no varied parameter is the one empty point.
  if (names.length === 0) {
    yield {};
    return;
  }
  const identity = dropsRepeats(ranges) ? pointIdentity(ranges) : undefined;
  const seen = new Set<string | number>();
  for (const u of sampler.unitPoints(drawnCount(spec), names.length, spec.seed)) {
    const values = ranges.map((range, d) => valueAt(range, u[d]!));
    if (identity !== undefined) {
      const id = identity(values, u);
      if (seen.has(id)) continue;
      seen.add(id);
    }
    const point: Point = {};
    for (let d = 0; d < names.length; d++) point[names[d]!] = values[d]!;
    yield point;
  }
}

export interface PointCount {
  /** Distinct points (jobs = count x replicates). */
  readonly count: number;
  /** The first points of a drawn sweep, in order, as many as asked for (none for a product). */
  readonly leading: readonly Point[];
}

/**
 * Number of distinct points: the product of a grid, `points` of a drawn
 * sweep with only continuous ranges, and otherwise the draws that remain
 * after repeats are dropped (this walks the draws: the loader checks first
 * that points x varied parameters is within its limit). The first `keep`
 * points of a drawn sweep come along from the same walk, so a sampler that
 * must lay out all its draws first (the Latin hypercube) does so once.
 */
export function countPoints(sweep: HasSpec, keep = 0): PointCount {
  const { spec } = sweep;
  const ranges = rangesOf(spec);
  const sampler = drawingSampler(spec);
  if (sampler === undefined) return { count: requestedPointCount(spec), leading: [] };
  const take = (): Point[] => {
    const leading: Point[] = [];
    if (keep <= 0) return leading;
    for (const point of iteratePoints(sweep)) {
      leading.push(point);
      if (leading.length >= keep) break;
    }
    return leading;
  };
  if (ranges.length === 0) return { count: 1, leading: take() };
  if (!dropsRepeats(ranges)) return { count: drawnCount(spec), leading: take() };

  const count = drawnCount(spec);
  const names = variedNamesOf(spec);
  const identity = pointIdentity(ranges);
  const seen = new Set<string | number>();
  const leading: Point[] = [];
  function* firstWalk(): Generator<number[]> {
    for (const u of sampler!.unitPoints(count, ranges.length, spec.seed)) {
      if (leading.length < keep) {
        // As iteratePoints: a draw that repeats an earlier point is not a point.
        const values = ranges.map((range, d) => valueAt(range, u[d]!));
        const id = identity(values, u);
        if (!seen.has(id)) {
          seen.add(id);
          const point: Point = {};
          for (let d = 0; d < names.length; d++) point[names[d]!] = values[d]!;
          leading.push(point);
        }
      }
      yield u;
    }
  }
  let walks = 0;
  const distinct = countDistinctDraws(
    count,
    () => (walks++ === 0 ? firstWalk() : sampler.unitPoints(count, ranges.length, spec.seed)),
    ranges,
  );
  return { count: distinct, leading };
}

/** `count` positions spread evenly over 0..total-1, starting at 0, ascending and distinct. */
export function spreadPositions(total: number, count: number): number[] {
  const n = Math.min(total, count);
  return Array.from({ length: n }, (_, i) => Math.floor((i * total) / n));
}

/**
 * `count` positions that represent the whole sweep: spread evenly over a
 * product (whose order runs parameter by parameter), the first ones of a
 * drawn sweep (whose draws are spread over the space from the start).
 */
export function representativePositions(sweep: HasSpec, total: number, count: number): number[] {
  if (drawingSampler(sweep.spec) === undefined) return spreadPositions(total, count);
  return Array.from({ length: Math.min(total, count) }, (_, i) => i);
}

/**
 * The points at the given positions of iteratePoints (ascending, each below
 * the point count), with their positions. A grid point is computed from its
 * position directly; a drawn sweep is walked up to the last position asked for.
 */
export function* pointsAtPositions(sweep: HasSpec, positions: readonly number[]): Generator<[number, Point]> {
  const { spec } = sweep;
  if (positions.length === 0) return;
  const names = variedNamesOf(spec);
  if (drawingSampler(spec) === undefined) {
    const axes = gridAxes(spec);
    const sizes = axes.map((a) => a.size);
    for (const position of positions) {
      const index = gridIndexAt(sizes, position);
      const point: Point = {};
      for (let d = 0; d < names.length; d++) point[names[d]!] = axes[d]!.at(index[d]!);
      yield [position, point];
    }
    return;
  }
  let next = 0;
  let position = 0;
  for (const point of iteratePoints(sweep)) {
    if (position === positions[next]) {
      yield [position, point];
      next++;
      if (next >= positions.length) return;
    }
    position++;
  }
}
