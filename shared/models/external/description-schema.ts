import { z } from 'zod';

/** The file that describes a model in its own folder. */
export const DESCRIPTION_FILE = 'recallscape-model.json';

/** Model ids share the job payload's limits (payload.model is at most 100 characters). */
const IdSchema = z
  .string()
  .max(100)
  .regex(/^[a-z0-9][a-z0-9-]*$/, 'lower-case letters, digits and "-", starting with a letter or digit');

/** Parameter and metric names end up in dotted field paths and CSV headers: keep them plain. */
export const NAME_PATTERN = /^[A-Za-z][A-Za-z0-9_]*$/;
const NameSchema = z.string().max(100).regex(NAME_PATTERN, 'a name is letters, digits and "_", starting with a letter');

/** Longest time limit a description may set: one week. */
export const MAX_TIMEOUT_MS = 7 * 24 * 3600 * 1000;

/**
 * One parameter: a JSON Schema (checked by ajv) whose default and description
 * are required, because every job's full parameter set is hashed with its
 * defaults and every axis needs a label. `unit` is an annotation for labels.
 */
export const ParameterSchema = z
  .object({
    description: z.string().min(1, 'say what the parameter means, with its unit'),
    unit: z.string().max(40).optional(),
    default: z.unknown().refine((v) => v !== undefined, 'every parameter needs a default'),
  })
  .catchall(z.unknown());

export const ParametersSchema = z
  .object({
    type: z.literal('object'),
    properties: z.record(NameSchema, ParameterSchema),
    additionalProperties: z
      .literal(false, { error: 'unknown parameters are always refused; leave additionalProperties out or false' })
      .optional(),
    required: z.array(z.string()).optional(),
    description: z.string().optional(),
  })
  // Other JSON Schema keywords (allOf, if/then, dependentRequired...) are passed to ajv as they are.
  .catchall(z.unknown());

export const MetricTypeSchema = z.enum(['boolean', 'number', 'integer', 'numbers']);
export type MetricType = z.infer<typeof MetricTypeSchema>;

export const MetricSpecSchema = z
  .object({
    type: MetricTypeSchema,
    description: z.string().min(1, 'say what the metric means'),
    unit: z.string().max(40).optional(),
    /** May the model report null (e.g. "no recall happened, so no latency")? */
    nullable: z.boolean().default(false),
  })
  .strict();
export type MetricSpec = z.infer<typeof MetricSpecSchema>;

const CommonFields = {
  $schema: z.string().optional(),
  id: IdSchema,
  version: z
    .string()
    .min(1)
    .max(50)
    .regex(/^[A-Za-z0-9._+-]+$/, 'letters, digits and . _ + -'),
  summary: z.string().max(300).default(''),
  parameters: ParametersSchema,
  metrics: z
    .record(NameSchema, MetricSpecSchema)
    .refine((m) => Object.keys(m).length > 0, 'declare at least the success metric'),
  successMetric: NameSchema,
  timeoutMs: z.number().int().min(1).max(MAX_TIMEOUT_MS),
};

/** Default extra time a program gets on the first job after it started (interpreter, imports). */
export const DEFAULT_STARTUP_MS = 60_000;

const RelativePath = z
  .string()
  .min(1)
  .refine((p) => !p.startsWith('/') && !/^[A-Za-z]:[\\/]/.test(p), 'a path relative to the model folder');

export const ProgramDescriptionSchema = z
  .object({
    ...CommonFields,
    kind: z.literal('program'),
    /** Argument array; the first entry is a program on PATH, or a path relative to the folder when it holds a "/". */
    command: z.array(z.string().min(1)).min(1, 'at least the program to start'),
    /** Extra time for the first job of a freshly started process, on top of timeoutMs. */
    startupMs: z.number().int().min(0).max(MAX_TIMEOUT_MS).default(DEFAULT_STARTUP_MS),
  })
  .strict();

export const ModuleDescriptionSchema = z
  .object({
    ...CommonFields,
    kind: z.literal('module'),
    /** A JavaScript module (.js or .mjs) relative to the folder. */
    module: RelativePath.refine((p) => /\.(m?js)$/.test(p), 'a .js or .mjs file'),
  })
  .strict();

export const ModelDescriptionSchema = z.discriminatedUnion(
  'kind',
  [ProgramDescriptionSchema, ModuleDescriptionSchema],
  { error: 'kind must be "program" (a process speaking the line protocol) or "module" (a JavaScript module)' },
);
export type ModelDescription = z.infer<typeof ModelDescriptionSchema>;
export type ProgramDescription = z.infer<typeof ProgramDescriptionSchema>;
export type ModuleDescription = z.infer<typeof ModuleDescriptionSchema>;
