import type { AnyModel } from './model.js';
import { MAX_TIMEOUT_MS } from './models/external/description-schema.js';
import { isExternalModel } from './models/external/external-model.js';

/**
 * The time limit of one job: how long a pool thread may run it before the
 * thread is terminated and replaced and the job fails as `timeout`. One rule
 * for every model, most specific first:
 *
 * 1. `--model-timeout MS` of the process running the job (run, worker): the
 *    person who runs the machine decides;
 * 2. the sweep's `jobTimeoutMs` (carried in every job's payload);
 * 3. the model's own: an external model's `timeoutMs`; for a built-in model
 *    its cost estimate of this job's parameters, converted to time at
 *    REFERENCE_NS_PER_OP and multiplied by SAFETY_FACTOR, but never less than
 *    FLOOR_MS.
 */

/** Longest limit anywhere (sweep field, option, description): one week. */
export const MAX_JOB_TIMEOUT_MS = MAX_TIMEOUT_MS;

/**
 * No default limit is shorter: a job of milliseconds must never time out
 * because the machine is loaded, swapping or collecting garbage.
 */
export const FLOOR_MS = 60_000;

/**
 * Nanoseconds of one core per operation of a model's cost estimate:
 * bcpnn-sequences at the demo's shape ((H, M) = (10, 20), 1.65e7 operations)
 * ran 8.2 ms per trial on the project's 2-core machine under load, 0.5 ns per
 * operation (measured 2026-12-02 with dist/ and model.run in a loop).
 */
export const REFERENCE_NS_PER_OP = 0.5;

/**
 * How much longer than the reference a job may take. The estimate misses work
 * at large networks with many sequences: measured on the same machine,
 * (H, M, K, L) = (100, 20, 8, 4) ran at 14 ns per estimated operation and
 * (100, 20, 16, 4) at 36 ns (63 s for an estimate of 0.9 s). A factor of 1000
 * leaves room for that error (about 70x), a slower or busier machine (a few
 * times) and a margin on top, so a limit stops runaway jobs without killing
 * slow but honest ones; a sweep that knows better sets jobTimeoutMs.
 */
export const SAFETY_FACTOR = 1000;

/** Extra time the pool allows a program model beyond its own limit, which the program's client enforces first. */
export const PROGRAM_GRACE_MS = 10_000;

/** Where a job's limit came from, for failure messages and logs. */
export type TimeLimitSource = 'option' | 'sweep' | 'model' | 'estimate';

export interface JobTimeLimit {
  /** The job's limit in ms: what a model that enforces its own limit (a program) is given. */
  readonly ms: number;
  readonly source: TimeLimitSource;
  /**
   * When the pool stops the thread, in ms after the job was handed to it: the
   * limit itself, or for a program model (whose client kills the program at
   * the limit and keeps the thread) the limit plus the program's start-up
   * allowance plus PROGRAM_GRACE_MS, as a backstop only.
   */
  readonly threadMs: number;
}

/** The default limit of a built-in model's job from its cost estimate. */
export function estimatedLimitMs(cost: number): number {
  if (!Number.isFinite(cost) || cost <= 0) return FLOOR_MS;
  const ms = (cost * REFERENCE_NS_PER_OP * SAFETY_FACTOR) / 1e6;
  return Math.min(MAX_JOB_TIMEOUT_MS, Math.max(FLOOR_MS, Math.ceil(ms)));
}

/**
 * The limit of one job of `model` with its validated `params`. `sweepMs` is
 * the payload's `timeoutMs` (the sweep's jobTimeoutMs), `optionMs` the
 * process's --model-timeout.
 */
export function jobTimeLimit(
  model: AnyModel,
  params: unknown,
  sweepMs: number | undefined,
  optionMs: number | undefined,
): JobTimeLimit {
  const external = isExternalModel(model) ? model.source : undefined;
  let ms: number;
  let source: TimeLimitSource;
  if (optionMs !== undefined) {
    ms = optionMs;
    source = 'option';
  } else if (sweepMs !== undefined) {
    ms = sweepMs;
    source = 'sweep';
  } else if (external !== undefined) {
    ms = external.timeoutMs;
    source = 'model';
  } else {
    let cost = Number.NaN;
    try {
      cost = Number(model.cost(params));
    } catch {
      // A cost function that fails gives the floor, like one that returns nonsense.
    }
    ms = estimatedLimitMs(cost);
    source = 'estimate';
  }
  const threadMs =
    external?.kind === 'program'
      ? Math.min(MAX_JOB_TIMEOUT_MS * 2, ms + (external.startupMs ?? 0) + PROGRAM_GRACE_MS)
      : ms;
  return { ms, source, threadMs };
}

/** "3.5 s", "2 min", "1.5 h": a limit for people. */
export function formatLimit(ms: number): string {
  if (ms < 1000) return `${ms} ms`;
  if (ms < 120_000) return `${Number((ms / 1000).toPrecision(3))} s`;
  if (ms < 7_200_000) return `${Number((ms / 60_000).toPrecision(3))} min`;
  return `${Number((ms / 3_600_000).toPrecision(3))} h`;
}

/** Where the limit came from, as a clause of a failure message. */
export function limitSourceText(source: TimeLimitSource): string {
  switch (source) {
    case 'option':
      return 'set by --model-timeout';
    case 'sweep':
      return "the sweep's jobTimeoutMs";
    case 'model':
      return "the model's timeoutMs";
    case 'estimate':
      return `the default: ${SAFETY_FACTOR} x the model's cost estimate at ${REFERENCE_NS_PER_OP} ns per operation, at least ${formatLimit(FLOOR_MS)}`;
  }
}
