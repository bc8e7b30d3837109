import type { Point } from '../schemas/records.js';
import { pointId, type RefineAxis } from './design.js';
import { midpoint } from './midpoint.js';
import type { RefineSettings } from './schema.js';

export interface TrialRange {
  /** Every point decided at its first batch, no neighbours on different sides: no midpoint. */
  readonly best: number;
  /** Every point runs to max and every round inserts every midpoint there is. */
  readonly worst: number;
  readonly bestPoints: number;
  readonly worstPoints: number;
}

/** The least and most trials an adaptive sweep can take. */
export function estimateTrials(
  basePoints: readonly Point[],
  along: readonly RefineAxis[],
  settings: RefineSettings,
): TrialRange {
  const ids = new Set(basePoints.map(pointId));
  const split = (axis: RefineAxis, p: Point, q: Point, round: number): void => {
    if (round > settings.rounds) return;
    const m = midpoint(axis, p[axis.name] as number, q[axis.name] as number);
    if (m === undefined) return;
    const middle = { ...p, [axis.name]: m };
    ids.add(pointId(middle));
    split(axis, p, middle, round + 1);
    split(axis, middle, q, round + 1);
  };
  for (const axis of along) {
    const lines = new Map<string, Point[]>();
    for (const point of basePoints) {
      const rest: Point = { ...point };
      delete rest[axis.name];
      const key = pointId(rest);
      lines.set(key, [...(lines.get(key) ?? []), point]);
    }
    for (const line of lines.values()) {
      line.sort((a, b) => (a[axis.name] as number) - (b[axis.name] as number));
      for (let i = 0; i + 1 < line.length; i++) split(axis, line[i]!, line[i + 1]!, 1);
    }
  }
  return {
    best: basePoints.length * settings.replicates.start,
    worst: ids.size * settings.replicates.max,
    bestPoints: basePoints.length,
    worstPoints: ids.size,
  };
}
