import {
  type AnyModel,
  type AsyncRunOptions,
  type Metrics,
  MetricsSchema,
  type RunOptions,
  type RunOutput,
} from '../shared/model.js';
import { externalModelSettings } from '../shared/models/external/settings.js';

/** A model returned metrics that do not fit MetricsSchema: a bug in the model, not in the job. */
export class MalformedMetricsError extends Error {
  static readonly errorName = 'MalformedMetricsError';
  override readonly name: string = MalformedMetricsError.errorName;
}

export interface ModelRun {
  /** What the model returned, untouched (metrics in the model's own key order, trace panels). */
  readonly output: RunOutput;
  /** The metrics as checked by MetricsSchema: what a record stores. */
  readonly metrics: Metrics;
  /** Time inside the model, ms. */
  readonly elapsedMs: number;
}

/**
 * The one place a model runs a trial. `params` must already be the output of
 * the model's own schema. Whatever the model throws passes through; metrics
 * that break the record format throw MalformedMetricsError.
 */
export function runModel(model: AnyModel, params: unknown, seed: number, options?: RunOptions): ModelRun {
  const started = performance.now();
  const output = model.run(params, seed, options);
  return checkedRun(output, performance.now() - started);
}

function checkedRun(output: RunOutput, elapsedMs: number): ModelRun {
  const checked = MetricsSchema.safeParse(output.metrics);
  if (!checked.success) {
    throw new MalformedMetricsError(`model returned malformed metrics: ${checked.error.message}`);
  }
  return { output, metrics: checked.data, elapsedMs };
}

/**
 * runModel for any model: one with `runAsync` (a program in another process,
 * an asynchronous module) is awaited, with the job's key and time limit;
 * failures it knows the kind of are thrown as ModelFailure.
 */
export async function runModelAsync(
  model: AnyModel,
  params: unknown,
  seed: number,
  options: AsyncRunOptions = {},
): Promise<ModelRun> {
  if (model.runAsync === undefined) return runModel(model, params, seed, options);
  // A time limit given on the command line (--model-timeout) wins over the model's own.
  const timeoutMs = options.timeoutMs ?? externalModelSettings().timeoutMs;
  const started = performance.now();
  const output = await model.runAsync(params, seed, timeoutMs === undefined ? options : { ...options, timeoutMs });
  return checkedRun(output, performance.now() - started);
}
