import { canonicalJson } from '../canonical-json.js';
import type { Point } from '../schemas/records.js';
import { type AxisKind, midpoint } from './midpoint.js';
import type { RefineSettings } from './schema.js';
import { type PointState, pointState, type TrialOutcome } from './sequential.js';

/** A varied parameter midpoints are inserted along. */
export interface RefineAxis extends AxisKind {
  readonly name: string;
}

export interface DesignInput {
  /** Points of the starting grid, in grid order. */
  readonly basePoints: readonly Point[];
  readonly along: readonly RefineAxis[];
  readonly settings: RefineSettings;
  /** The outcome of one trial, or undefined when it has no result yet. */
  readonly outcome: (point: Point, replicate: number) => TrialOutcome | undefined;
}

export interface DesignPoint {
  readonly point: Point;
  /** 0 for the starting grid, r for a midpoint inserted in round r. */
  readonly round: number;
  /** Trials of replicates 0..replicates-1 should exist now. */
  readonly replicates: number;
  readonly state: PointState;
}

export interface Design {
  /** Starting points in grid order, then inserted points in the order they were found. */
  readonly points: readonly DesignPoint[];
  /** No point waits for results and no neighbour pair waits for a decision. */
  readonly complete: boolean;
  /** Sum of replicates over the points. */
  readonly trials: number;
}

export const pointId = (point: Point): string => canonicalJson(point);

/**
 * The trials that should exist now, from the sweep's starting grid and the
 * results so far. Pure: equal results give an equal design, whatever order
 * they arrived in, so a stopped run resumes to the same design. Replicates
 * only ever grow, so an existing trial keeps its replicate number (and with
 * it its job key and seed).
 *
 * Refinement follows the lines of the starting grid along each `along` axis:
 * between neighbours whose decided sides differ, or where either is
 * undecided, the midpoint is added, and the two halves are looked at again
 * in the next round, up to `rounds`. A pair is looked at as soon as both its
 * points are decided, without waiting for the rest of the round.
 */
export function nextDesign(input: DesignInput): Design {
  const { settings } = input;
  const byId = new Map<string, DesignPoint>();
  const order: DesignPoint[] = [];
  let complete = true;

  const visit = (point: Point, round: number): DesignPoint => {
    const id = pointId(point);
    const known = byId.get(id);
    if (known !== undefined) return known;
    const state = pointState(settings, (r) => input.outcome(point, r));
    if (state.kind === 'running') complete = false;
    const entry: DesignPoint = { point, round, replicates: state.replicates, state };
    byId.set(id, entry);
    order.push(entry);
    return entry;
  };

  for (const point of input.basePoints) visit(point, 0);

  const refinePair = (axis: RefineAxis, p: DesignPoint, q: DesignPoint, round: number): void => {
    if (round > settings.rounds) return;
    if (p.state.kind === 'running' || q.state.kind === 'running') {
      complete = false;
      return;
    }
    if (p.state.kind === q.state.kind && p.state.kind !== 'undecided') return;
    const m = midpoint(axis, p.point[axis.name] as number, q.point[axis.name] as number);
    if (m === undefined) return;
    const middle = visit({ ...p.point, [axis.name]: m }, round);
    refinePair(axis, p, middle, round + 1);
    refinePair(axis, middle, q, round + 1);
  };

  for (const axis of input.along) {
    // Lines of the starting grid along this axis: equal in every other parameter.
    const lines = new Map<string, DesignPoint[]>();
    for (const point of input.basePoints) {
      const rest: Point = { ...point };
      delete rest[axis.name];
      const key = pointId(rest);
      const line = lines.get(key) ?? [];
      line.push(byId.get(pointId(point))!);
      lines.set(key, line);
    }
    for (const line of lines.values()) {
      line.sort((a, b) => (a.point[axis.name] as number) - (b.point[axis.name] as number));
      for (let i = 0; i + 1 < line.length; i++) refinePair(axis, line[i]!, line[i + 1]!, 1);
    }
  }

  return { points: order, complete, trials: order.reduce((sum, p) => sum + p.replicates, 0) };
}

/** Every (point, replicate) of a design, point by point. */
export function* designTrials(design: Design): Generator<{ point: Point; replicate: number }> {
  for (const entry of design.points) {
    for (let replicate = 0; replicate < entry.replicates; replicate++) yield { point: entry.point, replicate };
  }
}
