import { type AnyModel, type Metrics, MetricsSchema, type RunOptions, type RunOutput } from '../shared/model.js';

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
  const elapsedMs = performance.now() - started;
  const checked = MetricsSchema.safeParse(output.metrics);
  if (!checked.success) {
    throw new MalformedMetricsError(`model returned malformed metrics: ${checked.error.message}`);
  }
  return { output, metrics: checked.data, elapsedMs };
}
