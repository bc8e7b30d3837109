import type { Point } from '../schemas/records.js';
import type { LoadedSweep } from '../sweep/load.js';
import { iteratePoints } from '../sweep/points.js';
import { gridValues, type ListRange, type StepsRange } from '../sweep/ranges.js';
import { type Design, nextDesign, type RefineAxis } from './design.js';
import { estimateTrials, type TrialRange } from './estimate.js';
import type { TrialOutcome } from './sequential.js';
import { refineAxisNames } from './validate.js';

/**
 * A refined axis of a loaded sweep. Whole numbers only when the model refuses
 * a value halfway between two grid values (its schema says integer); log
 * midpoints for a log-scaled from/to/steps range.
 */
export function refineAxes(sweep: LoadedSweep): RefineAxis[] {
  const first = iteratePoints(sweep).next();
  const base: Point = first.done === true ? {} : first.value;
  return refineAxisNames(sweep.spec).map((name) => {
    const range = sweep.spec.vary[name]!;
    const log = 'scale' in range && range.scale === 'log';
    const values = gridValues(range as ListRange | StepsRange)
      .map(Number)
      .sort((a, b) => a - b);
    // Values the model took that are not whole say the axis is continuous;
    // otherwise ask the model about a value half a unit above the smallest.
    if (!values.every(Number.isInteger) || values.length < 2) return { name, whole: false, log };
    const probe = sweep.model.params.safeParse({ ...sweep.spec.fixed, ...base, [name]: values[0]! + 0.5 });
    return { name, whole: !probe.success, log };
  });
}

/** The value of a result's metric as a trial outcome for the border. */
export function metricOutcome(value: unknown): TrialOutcome {
  if (value === true || value === 1) return true;
  if (value === false || value === 0) return false;
  return null;
}

/** The design of an adaptive sweep given the outcomes known so far. */
export function sweepDesign(
  sweep: LoadedSweep,
  outcome: (point: Point, replicate: number) => TrialOutcome | undefined,
): Design {
  const refine = sweep.spec.refine;
  if (refine === undefined) throw new TypeError('sweepDesign needs a sweep with a refine section');
  return nextDesign({ basePoints: [...iteratePoints(sweep)], along: refineAxes(sweep), settings: refine, outcome });
}

/** Least and most trials of an adaptive sweep. */
export function sweepTrialRange(sweep: LoadedSweep): TrialRange {
  const refine = sweep.spec.refine;
  if (refine === undefined) throw new TypeError('sweepTrialRange needs a sweep with a refine section');
  return estimateTrials([...iteratePoints(sweep)], refineAxes(sweep), refine);
}
