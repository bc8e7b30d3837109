import { z } from 'zod';

/**
 * What a model returns for one trial. Scalars only at the top level are
 * summarised (booleans as rates, numbers as mean and spread); arrays carry
 * per-sequence detail for people reading the raw records.
 * `success` is required: it is what phase diagrams show by default.
 */
export const MetricValueSchema = z.union([z.number(), z.boolean(), z.null(), z.array(z.number().nullable())]);
export const MetricsSchema = z.object({ success: z.boolean() }).catchall(MetricValueSchema);
export type Metrics = z.infer<typeof MetricsSchema>;

/** Unit and meaning of a parameter, for axis labels and docs. */
export interface ParamInfo {
  readonly unit: string;
  readonly description: string;
}

/** Where a traced pattern is stored: sequence and position, both counted from 0 (position 0 is the cue). */
export interface TraceMember {
  readonly sequence: number;
  readonly position: number;
}

/**
 * A time course recorded during one trial, e.g. the match of every stored
 * pattern during one recall. `values` is row-major: steps x series.
 */
export interface TracePanel {
  readonly title: string;
  /** Time between recorded rows, in ms. */
  readonly stepMs: number;
  /** Number of recorded rows. */
  readonly steps: number;
  readonly seriesLabels: readonly string[];
  /**
   * Per series, where its pattern is stored; more than one place for a
   * pattern several sequences share. Lets a plot group lines by sequence.
   */
  readonly seriesMembers?: readonly (readonly TraceMember[])[];
  /** Rows before this time (ms) are the cue window, drawn shaded. */
  readonly markEndMs: number;
  readonly values: Float64Array;
}

export interface RunOptions {
  /** Record the time course of every recall (costs memory; off in sweeps). */
  readonly trace?: boolean;
}

/** Options of `runAsync`, for models that run outside the calling thread. */
export interface AsyncRunOptions extends RunOptions {
  /** The job's key, echoed by the model (a label of the caller's choosing outside sweeps). */
  readonly key?: string;
  /** Time limit of this trial; the model's own limit when absent. */
  readonly timeoutMs?: number;
}

/**
 * Type and meaning of a metric, for reports and docs. The description says
 * what the metric measures in the model's own terms (for `success`: what
 * counts as a successful trial); the unit is for people ("ms", "positions").
 */
export interface MetricInfo {
  readonly type: 'boolean' | 'number' | 'integer' | 'numbers';
  readonly description: string;
  readonly unit?: string;
}

export interface RunOutput {
  readonly metrics: Metrics;
  readonly trace?: readonly TracePanel[];
}

/**
 * A model is a plain object in the registry. The runner knows nothing else
 * about it, so new models need no change to planning, queueing or reporting.
 */
export interface Model<Schema extends z.ZodObject = z.ZodObject> {
  readonly id: string;
  /** Bump whenever the same (params, seed) could give different metrics. */
  readonly version: string;
  readonly summary: string;
  /** Every parameter with its default; `params.parse({})` gives the defaults. */
  readonly params: Schema;
  readonly paramInfo: Readonly<Record<string, ParamInfo>>;
  /** Estimated arithmetic operations of one trial (for planning). */
  cost(params: z.output<Schema>): number;
  /** Pure and deterministic: same params and seed, same metrics, anywhere. */
  run(params: z.output<Schema>, seed: number, options?: RunOptions): RunOutput;
  /**
   * Models run outside this thread (a program speaking the line protocol) or
   * asynchronously have this; job runners use it when present. It fails by
   * throwing ModelFailure (shared/errors.ts) with the failure's kind.
   */
  runAsync?(params: z.output<Schema>, seed: number, options?: AsyncRunOptions): Promise<RunOutput>;
  /** Release what runAsync holds (a child process); safe to call more than once. */
  close?(): Promise<void>;
  /** Declared metrics, when the model declares them (models with a description file do). */
  readonly metricInfo?: Readonly<Record<string, MetricInfo>>;
}

/** Registry entries lose the precise schema type; callers re-validate. */
// biome-ignore lint/suspicious/noExplicitAny: the registry holds models of different schemas; callers re-validate
export type AnyModel = Model<any>;
