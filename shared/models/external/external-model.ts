import type { z } from 'zod';
import { ModelFailure } from '../../errors.js';
import type { AsyncRunOptions, MetricInfo, Model, RunOptions, RunOutput } from '../../model.js';
import type { MetricSpec, ModelDescription } from './description-schema.js';
import type { MetricDeclaration } from './metric-check.js';
import type { CompiledParameters } from './param-schema.js';

/** Where an external model came from, for messages and for `inspect`. */
export interface ExternalSource {
  readonly kind: ModelDescription['kind'];
  /** Absolute folder of the model. */
  readonly folder: string;
  /** Absolute path of its recallscape-model.json. */
  readonly descriptionFile: string;
  readonly timeoutMs: number;
  /** Program kind: extra time for the first job after the program started (0 for modules). */
  readonly startupMs?: number;
  readonly metrics: Readonly<Record<string, MetricSpec>>;
  readonly successMetric: string;
}

/** A model described by a recallscape-model.json. */
export interface ExternalModel extends Model<z.ZodObject> {
  readonly source: ExternalSource;
  runAsync(params: Record<string, unknown>, seed: number, options?: AsyncRunOptions): Promise<RunOutput>;
  close(): Promise<void>;
  /** Process id of the program's supervisor serving this thread now (program models), for diagnostics and tests. */
  processId(): number | undefined;
}

export function isExternalModel(model: Model<z.ZodObject>): model is ExternalModel {
  return (model as Partial<ExternalModel>).source !== undefined && typeof model.runAsync === 'function';
}

/** What a kind (program or module) adds: how one trial runs. */
export interface ExternalRunner {
  runAsync(
    params: Record<string, unknown>,
    seed: number,
    options: Required<Pick<AsyncRunOptions, 'key' | 'timeoutMs'>> & RunOptions,
  ): Promise<RunOutput>;
  /** A synchronous trial, when the kind can do one (a module whose run returns at once). */
  runSync?(params: Record<string, unknown>, seed: number, options: RunOptions): RunOutput;
  cost?(params: Record<string, unknown>): number;
  close(): Promise<void>;
  processId?(): number | undefined;
}

export function declarationOf(description: ModelDescription): MetricDeclaration {
  return { metrics: description.metrics, successMetric: description.successMetric };
}

/**
 * The Model around a description and a runner. Parameters are the compiled
 * JSON Schema; `cost` is one operation per job unless a module says better,
 * so `plan` calibrates seconds per job for programs.
 */
export function externalModel(
  description: ModelDescription,
  compiled: CompiledParameters,
  source: ExternalSource,
  runner: ExternalRunner,
): ExternalModel {
  const metricInfo: Record<string, MetricInfo> = {};
  for (const [name, spec] of Object.entries(description.metrics)) {
    metricInfo[name] = {
      type: spec.type,
      description: spec.description,
      ...(spec.unit === undefined ? {} : { unit: spec.unit }),
    };
  }
  return {
    id: description.id,
    version: description.version,
    summary: description.summary === '' ? `${description.kind} model from ${source.folder}` : description.summary,
    params: compiled.schema,
    paramInfo: compiled.paramInfo,
    metricInfo,
    source,
    cost: (params) => runner.cost?.(params) ?? 1,
    run(params, seed, options: RunOptions = {}) {
      if (runner.runSync === undefined) {
        throw new ModelFailure(
          'exception',
          `model ${description.id} is a ${description.kind} model: it runs asynchronously (runAsync), through the job runner`,
          false,
        );
      }
      return runner.runSync(params, seed, options);
    },
    runAsync(params, seed, options: AsyncRunOptions = {}) {
      return runner.runAsync(params, seed, {
        key: options.key ?? `seed-${seed}`,
        timeoutMs: options.timeoutMs ?? description.timeoutMs,
        ...(options.trace === undefined ? {} : { trace: options.trace }),
      });
    },
    close: () => runner.close(),
    processId: () => runner.processId?.(),
  };
}
