import type { TrialRange } from '../shared/refine/estimate.js';
import { sweepTrialRange } from '../shared/refine/sweep-design.js';
import type { Point } from '../shared/schemas/records.js';
import { computedParams, countJobs, expandJobs, fullParams, resolveParams } from '../shared/sweep/expand.js';
import { type LoadedSweep, loadSweepFile } from '../shared/sweep/load.js';
import { iteratePoints, pointsAtPositions, representativePositions, spreadPositions } from '../shared/sweep/points.js';
import { CalibrationRunner } from './calibration-runner.js';
import { formatDuration } from './progress-display.js';

/** Default ceiling on jobs per sweep; `--yes` or `--max-jobs` lifts it. */
export const DEFAULT_JOB_LIMIT = 1_000_000;

export interface LoadForCommandOptions {
  readonly maxJobs: number;
  readonly yes: boolean;
}

/**
 * Load and validate a sweep file for a command, refusing more jobs than the
 * limit unless the person said yes. Nothing is written, so a typo in a range
 * costs nothing. Throws InputError.
 */
export async function loadSweepForCommand(file: string, options: LoadForCommandOptions): Promise<LoadedSweep> {
  // The loader counts the jobs (before expanding a grid) and refuses too many.
  return loadSweepFile(file, options.yes ? {} : { jobLimit: options.maxJobs });
}

export interface CalibrationFigures {
  readonly jobs: number;
  readonly seconds: number;
  readonly ops: number;
  /** Seconds of one core per model operation, or null if the jobs cost nothing. */
  readonly secondsPerOp: number | null;
  /** Messages of calibration jobs that threw. */
  readonly failures: readonly string[];
}

export interface SweepPlan {
  readonly name: string;
  readonly source: string | null;
  readonly model: string;
  readonly modelVersion: string;
  readonly sampler: string;
  readonly variedNames: readonly string[];
  readonly points: number;
  readonly replicates: number;
  readonly jobs: number;
  /** Sum of model.cost over every job (estimated from costedPoints points when fewer than all). */
  readonly totalOps: number;
  readonly costedPoints: number;
  /** Points run through the model's schema while loading. */
  readonly checkedPoints: number;
  readonly sample: readonly Point[];
  /** Computed parameters: name -> normalised formula (file order). */
  readonly formulas: Readonly<Record<string, string>>;
  /** Values of the computed parameters at each sample point. */
  readonly sampleComputed: ReadonlyArray<Readonly<Record<string, number>>>;
  readonly calibration: CalibrationFigures | null;
  readonly coreHours: number | null;
  /** An adaptive sweep (refine): its trials as a range; jobs and work are then the worst case. */
  readonly adaptive?: TrialRange & { readonly start: number; readonly max: number };
  /** Jobs of this sweep that already have a result (0 when none were given, and for adaptive sweeps). */
  readonly done: number;
  readonly remainingJobs: number;
  /** Sum of model.cost over the jobs without a result. */
  readonly remainingOps: number;
  readonly remainingCoreHours: number | null;
}

export interface PlanOptions {
  /** Jobs to time for seconds-per-operation; 0 skips calibration. */
  readonly calibrate: number;
  /** Points shown as a sample. */
  readonly sampleSize?: number;
  /**
   * Keys of jobs that already have a result: the remaining work leaves them
   * out. Not used for adaptive sweeps, whose later jobs depend on the results.
   */
  readonly done?: ReadonlySet<string>;
}

/** Points whose cost is summed: every point of a smaller sweep, a representative selection of a larger one. */
export const COSTED_POINTS = 256;

/**
 * Count and cost a sweep. The core-hour estimate is the model's own cost
 * figure summed over every job (over COSTED_POINTS representative points,
 * scaled up, for a larger sweep, so planning takes the same short time
 * whatever the sweep's size), times seconds per operation measured by
 * running a few real jobs (spread over those points) on this machine.
 */
export async function planSweep(sweep: LoadedSweep, options: PlanOptions): Promise<SweepPlan> {
  const pointCount = sweep.pointCount;
  const replicates = sweep.spec.replicates;
  const sampleSize = options.sampleSize ?? 5;
  const sample: Point[] = [];
  for (const point of iteratePoints(sweep)) {
    if (sample.length >= sampleSize) break;
    sample.push(point);
  }
  const costed: Point[] = [];
  let costSum = 0;
  for (const [, point] of pointsAtPositions(sweep, representativePositions(sweep, pointCount, COSTED_POINTS))) {
    // A point the model refuses (possible only outside the points checked while loading) has no cost.
    const params = resolveParams(sweep, point);
    if (params === undefined) continue;
    costSum += Number(sweep.model.cost(params));
    costed.push(point);
  }
  const opsPerReplicate =
    costed.length === pointCount ? costSum : costed.length === 0 ? 0 : (costSum / costed.length) * pointCount;
  const refine = sweep.spec.refine;
  const range = refine === undefined ? undefined : sweepTrialRange(sweep);
  // Adaptive: the worst case, at the starting grid's average cost per trial.
  const totalOps =
    range === undefined ? opsPerReplicate * replicates : (opsPerReplicate / Math.max(1, pointCount)) * range.worst;
  // Timing jobs are spread evenly over the costed points (cost can vary a lot between them).
  const timingPoints = spreadPositions(costed.length, Math.min(options.calibrate, costed.length)).map(
    (i) => costed[i]!,
  );

  let calibration: CalibrationFigures | null = null;
  if (timingPoints.length > 0) {
    let seconds = 0;
    let ops = 0;
    let jobs = 0;
    const failures: string[] = [];
    let overLimit = false;
    const runner = new CalibrationRunner(sweep);
    try {
      // One untimed run first: the first call of a model includes compiling its
      // code (for a program model, starting its process), which would inflate a small sample.
      const warm = await runner.time(timingPoints[0]!);
      if (!warm.ok && warm.overLimit) {
        failures.push(warm.message);
        overLimit = true;
      } else
        for (const point of timingPoints) {
          const timed = await runner.time(point);
          if (!timed.ok) {
            failures.push(timed.message);
            // Every further job could take as long: the estimate stays uncalibrated.
            if (timed.overLimit) {
              overLimit = true;
              break;
            }
            continue;
          }
          seconds += timed.seconds;
          ops += Number(sweep.model.cost(fullParams(sweep, point)));
          jobs++;
        }
    } finally {
      await runner.close();
    }
    if (overLimit) {
      jobs = 0;
      seconds = 0;
      ops = 0;
    }
    calibration = { jobs, seconds, ops, secondsPerOp: jobs > 0 && ops > 0 ? seconds / ops : null, failures };
  }
  const secondsPerOp = calibration?.secondsPerOp ?? null;
  const jobs = range === undefined ? countJobs(sweep) : range.worst;
  // What is left: only computed when results exist, because it hashes every job's key.
  let done = 0;
  let remainingOps = totalOps;
  if (range === undefined && options.done !== undefined && options.done.size > 0) {
    remainingOps = 0;
    for (const job of expandJobs(sweep)) {
      if (options.done.has(job.key)) done++;
      else remainingOps += Number(sweep.model.cost(job.params));
    }
  }
  return {
    name: sweep.spec.name,
    source: sweep.source,
    model: sweep.model.id,
    modelVersion: sweep.model.version,
    sampler:
      'points' in sweep.spec.sampler
        ? `${sweep.spec.sampler.kind} (${sweep.spec.sampler.points} points)`
        : sweep.spec.sampler.kind,
    variedNames: sweep.variedNames,
    points: pointCount,
    replicates,
    jobs,
    totalOps,
    costedPoints: costed.length,
    checkedPoints: sweep.checkedPoints,
    sample,
    formulas: sweep.derived?.compiled.normalised ?? {},
    // The first points are among those checked while loading; a formula that still fails shows no values.
    sampleComputed: sample.map((point) => {
      try {
        return computedParams(sweep, point);
      } catch {
        return {};
      }
    }),
    calibration,
    coreHours: secondsPerOp === null ? null : (totalOps * secondsPerOp) / 3600,
    ...(range === undefined || refine === undefined
      ? {}
      : { adaptive: { ...range, start: refine.replicates.start, max: refine.replicates.max } }),
    done,
    remainingJobs: jobs - done,
    remainingOps,
    remainingCoreHours: secondsPerOp === null ? null : (remainingOps * secondsPerOp) / 3600,
  };
}

/** Cores the wall-clock estimate is for: this machine's threads, or as many as `--cores` says. */
export interface PlanCores {
  readonly count: number;
  readonly unit: 'thread' | 'core';
}

/**
 * Wall-clock seconds for the remaining work on `cores`, with jobs spread
 * evenly: the core-seconds shared out, but never less than one average job
 * per core in turn (100 jobs do not finish faster on 1,000 cores than on 100).
 */
export function wallSeconds(plan: SweepPlan, cores: number): number | null {
  if (plan.remainingCoreHours === null) return null;
  if (plan.remainingJobs === 0) return 0;
  const perJob = (plan.remainingCoreHours * 3600) / plan.remainingJobs;
  return Math.ceil(plan.remainingJobs / Math.max(1, cores)) * perJob;
}

function formatPoint(point: Point, names: readonly string[], computed: Readonly<Record<string, number>>): string {
  const varied =
    names.length === 0 ? '(no varied parameters)' : names.map((n) => `${n}=${String(point[n])}`).join('  ');
  const derived = Object.entries(computed).map(([n, v]) => `${n}=${String(Number(v.toPrecision(6)))}`);
  return derived.length === 0 ? varied : `${varied}  ->  ${derived.join('  ')}`;
}

const count = (n: number): string => n.toLocaleString('en-US');

export interface PlanTextOptions {
  readonly cores: PlanCores;
  /** The sweep folder whose results were counted. */
  readonly resultsDir?: string;
  /** A folder of the same name that holds another sweep (its results do not count). */
  readonly otherSweepDir?: string;
}

/** The plan as text for a person. */
export function formatPlan(plan: SweepPlan, options: PlanTextOptions): string {
  const { cores, resultsDir } = options;
  const lines: string[] = [];
  const row = (label: string, value: string): void => {
    lines.push(`${label.padEnd(12)}${value}`);
  };
  row('sweep', plan.source === null ? plan.name : `${plan.name} (from ${plan.source})`);
  row('model', `${plan.model} version ${plan.modelVersion}`);
  row('sampler', plan.sampler);
  row('varied', plan.variedNames.length === 0 ? '(none)' : plan.variedNames.join(', '));
  for (const [name, formula] of Object.entries(plan.formulas)) row('computed', `${name} = ${formula}`);
  row('points', count(plan.points));
  const a = plan.adaptive;
  if (a === undefined) {
    row('replicates', count(plan.replicates));
    row('jobs', count(plan.jobs));
  } else {
    row('replicates', `${count(a.start)} to ${count(a.max)} per point (adaptive: refine)`);
    row('jobs', `${count(a.best)} to ${count(a.worst)} (adaptive; the work and estimate below are the worst case)`);
    row(
      'best case',
      `every starting point decided after its first ${count(a.start)}, no midpoint: ${count(a.bestPoints)} points`,
    );
    row(
      'worst case',
      `every point runs to ${count(a.max)} and every round inserts every midpoint: ${count(a.worstPoints)} points`,
    );
  }
  if (plan.done > 0) {
    row(
      'results',
      `${count(plan.done)} of ${count(plan.jobs)} jobs already have a result${resultsDir === undefined ? '' : ` in ${resultsDir}`}; ${count(plan.remainingJobs)} to run`,
    );
  }
  if (options.otherSweepDir !== undefined) {
    row('results', `none counted: ${options.otherSweepDir} holds another sweep of this name (run would refuse it)`);
  }
  if (plan.checkedPoints < plan.points) {
    row(
      'checked',
      `${count(plan.checkedPoints)} of ${count(plan.points)} points against the model (the others when they run)`,
    );
  }
  const from = plan.costedPoints < plan.points ? `, from ${count(plan.costedPoints)} of the points` : '';
  row('work', `${plan.totalOps.toPrecision(3)} operations (the model's own estimate${from})`);
  const c = plan.calibration;
  if (c === null) {
    row('estimate', 'not calibrated (--calibrate 0); operations only');
  } else {
    for (const failure of c.failures) row('calibration', `a timing job failed: ${failure}`);
    if (c.secondsPerOp === null || plan.coreHours === null) {
      row('estimate', c.jobs === 0 ? 'none: no timing job finished' : 'none: the timed jobs report zero cost');
    } else {
      row(
        'calibration',
        `${c.jobs} job${c.jobs === 1 ? '' : 's'} timed (after one warm-up run) in ${c.seconds.toFixed(3)} s, ${c.secondsPerOp.toPrecision(3)} s per operation`,
      );
      const on = `${count(cores.count)} ${cores.unit}${cores.count === 1 ? '' : 's'}`;
      const wall = wallSeconds(plan, cores.count) ?? 0;
      const remaining = plan.remainingCoreHours ?? 0;
      const busy = '(timings on a busy machine run high)';
      if (plan.done === 0) {
        row('estimate', `${plan.coreHours.toPrecision(3)} core-hours, about ${formatDuration(wall)} on ${on} ${busy}`);
      } else if (plan.remainingJobs === 0) {
        row('estimate', `nothing left to run (the whole sweep: ${plan.coreHours.toPrecision(3)} core-hours)`);
      } else {
        row(
          'estimate',
          `${remaining.toPrecision(3)} core-hours left of ${plan.coreHours.toPrecision(3)}, about ${formatDuration(wall)} on ${on} ${busy}`,
        );
      }
    }
  }
  lines.push('');
  lines.push(
    plan.sample.length < plan.points ? `first ${plan.sample.length} of ${count(plan.points)} points:` : 'points:',
  );
  for (const [i, point] of plan.sample.entries()) {
    lines.push(`  ${formatPoint(point, plan.variedNames, plan.sampleComputed[i] ?? {})}`);
  }
  return `${lines.join('\n')}\n`;
}
