import { z } from 'zod';
import { PointValueSchema } from '../schemas/records.js';

/**
 * Ranges of a varied parameter. Each kind is recognised by its leading key
 * (`list`, `from`, `between`, `among`), so an error can name the kind the
 * user meant instead of listing every alternative.
 */

const ScaleSchema = z
  .enum(['linear', 'log'])
  .default('linear')
  .describe('linear: even spacing; log: even spacing of the logarithm (needs values > 0)');

const distinct = (values: readonly unknown[]): boolean =>
  new Set(values.map((v) => `${typeof v}:${String(v)}`)).size === values.length;

/** Explicit values; a discrete set for every sampler. */
export const ListRangeSchema = z
  .object({
    list: z
      .array(PointValueSchema)
      .min(1, 'a list needs at least one value')
      .max(100_000)
      .refine(distinct, 'the values of a list must be distinct')
      .describe('Explicit values: numbers, strings or booleans'),
  })
  .strict();

/** Evenly spaced grid values, ends included (grid sampler only). */
export const StepsRangeSchema = z
  .object({
    from: z.number(),
    to: z.number(),
    steps: z.number().int('steps must be a whole number').min(1, 'steps must be at least 1').max(100_000),
    scale: ScaleSchema,
  })
  .strict()
  .superRefine((r, ctx) => {
    if (r.scale === 'log' && (r.from <= 0 || r.to <= 0)) {
      ctx.addIssue({
        code: 'custom',
        path: ['from'],
        message: `a log scale needs from and to greater than 0 (got from ${r.from}, to ${r.to}); use scale: linear or positive ends`,
      });
    }
    if (r.steps > 1 && r.from === r.to) {
      ctx.addIssue({
        code: 'custom',
        path: ['steps'],
        message: `from equals to, so ${r.steps} steps would repeat one value; use steps: 1 or different ends`,
      });
    }
    if (r.steps === 1 && r.from !== r.to) {
      ctx.addIssue({
        code: 'custom',
        path: ['steps'],
        message: `steps: 1 gives one value but from (${r.from}) and to (${r.to}) differ; use steps >= 2, or from = to`,
      });
    }
    // Interior values are rounded to 12 significant digits (tidy); steps closer
    // than that would repeat a value, and repeated values would be repeated jobs.
    if (r.steps > 1 && r.from !== r.to && !(r.scale === 'log' && (r.from <= 0 || r.to <= 0))) {
      const values = stepValues(r);
      const repeated = values.find((v, i) => values.indexOf(v) !== i);
      if (repeated !== undefined) {
        ctx.addIssue({
          code: 'custom',
          path: ['steps'],
          message: `${r.steps} steps from ${r.from} to ${r.to} are closer than the 12-significant-digit precision of grid values, so the value ${repeated} would repeat; use fewer steps or ends further apart`,
        });
      }
    }
  });

/** A continuous interval for the random, lhs and sobol samplers. */
export const BetweenRangeSchema = z
  .object({
    between: z.tuple([z.number(), z.number()]).describe('[low, high], low < high'),
    scale: ScaleSchema,
    integer: z.boolean().default(false).describe('Draw whole numbers, uniformly over the integers of [low, high]'),
  })
  .strict()
  .superRefine((r, ctx) => {
    const [a, b] = r.between;
    if (!(a < b))
      ctx.addIssue({
        code: 'custom',
        path: ['between'],
        message: `the low end must be below the high end, got [${a}, ${b}]`,
      });
    if (r.scale === 'log' && a <= 0) {
      ctx.addIssue({
        code: 'custom',
        path: ['between'],
        message: `a log scale needs both ends greater than 0, got [${a}, ${b}]; use scale: linear or a positive low end`,
      });
    }
    if (r.integer && !(Number.isInteger(a) && Number.isInteger(b))) {
      ctx.addIssue({
        code: 'custom',
        path: ['between'],
        message: `integer: true needs whole-number ends, got [${a}, ${b}]`,
      });
    }
  });

/** A discrete set for the random, lhs and sobol samplers (each value equally likely). */
export const AmongRangeSchema = z
  .object({
    among: z
      .array(PointValueSchema)
      .min(1, 'among needs at least one value')
      .max(100_000)
      .refine(distinct, 'the values of among must be distinct'),
  })
  .strict();

/** Any range (used for the JSON Schema and the inferred type). */
export const RangeSchema = z.union([ListRangeSchema, StepsRangeSchema, BetweenRangeSchema, AmongRangeSchema]);

export type ListRange = z.output<typeof ListRangeSchema>;
export type StepsRange = z.output<typeof StepsRangeSchema>;
export type BetweenRange = z.output<typeof BetweenRangeSchema>;
export type AmongRange = z.output<typeof AmongRangeSchema>;
export type Range = z.output<typeof RangeSchema>;
export type RangeKind = 'list' | 'steps' | 'between' | 'among';

/** Which kind a raw range object is, by its leading key; undefined if none. */
export function rangeKindOf(raw: unknown): RangeKind | undefined {
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) return undefined;
  if ('list' in raw) return 'list';
  if ('between' in raw) return 'between';
  if ('among' in raw) return 'among';
  if ('from' in raw || 'to' in raw || 'steps' in raw) return 'steps';
  return undefined;
}

export function rangeKind(range: Range): RangeKind {
  const kind = rangeKindOf(range);
  if (kind === undefined) throw new TypeError('not a range');
  return kind;
}

export const RANGE_SCHEMAS = {
  list: ListRangeSchema,
  steps: StepsRangeSchema,
  between: BetweenRangeSchema,
  among: AmongRangeSchema,
} as const;

/**
 * Twelve significant digits: grid and sampled values stay readable
 * (0.3, not 0.30000000000000004) and identical on every machine, because
 * toPrecision is exactly specified by ECMAScript.
 */
export function tidy(x: number): number {
  if (x === 0 || !Number.isFinite(x)) return x;
  return Number(x.toPrecision(12));
}

/** The values of a grid range, in order. */
export function stepValues(range: StepsRange): number[] {
  const { from, to, steps, scale } = range;
  if (steps === 1) return [from];
  const values: number[] = [];
  for (let i = 0; i < steps; i++) {
    const t = i / (steps - 1);
    let v: number;
    if (i === 0) v = from;
    else if (i === steps - 1) v = to;
    else if (scale === 'log') v = tidy(Math.exp(Math.log(from) + t * (Math.log(to) - Math.log(from))));
    else v = tidy(from + t * (to - from));
    values.push(v);
  }
  return values;
}

/** Values a grid range takes (list or steps). */
export function gridValues(range: ListRange | StepsRange): Array<string | number | boolean> {
  return 'list' in range ? [...range.list] : stepValues(range);
}

/**
 * Map a unit value u in [0, 1) to a range value. Discrete sets take index
 * floor(u*n). `between` is uniform (or log-uniform) on [low, high); with
 * `integer: true` every whole number of [low, high] is equally likely on a
 * linear scale, and on a log scale floor() of a log-uniform draw on
 * [low, high + 1) is taken.
 */
export function valueAt(range: Range, u: number): string | number | boolean {
  if ('list' in range || 'among' in range) {
    const values = 'list' in range ? range.list : range.among;
    const i = Math.min(values.length - 1, Math.floor(u * values.length));
    return values[i]!;
  }
  if ('between' in range) {
    const [a, b] = range.between;
    if (range.integer) {
      if (range.scale === 'log') {
        const v = Math.floor(Math.exp(Math.log(a) + u * (Math.log(b + 1) - Math.log(a))));
        return Math.min(b, Math.max(a, v));
      }
      return Math.min(b, a + Math.floor(u * (b - a + 1)));
    }
    const v = range.scale === 'log' ? Math.exp(Math.log(a) + u * (Math.log(b) - Math.log(a))) : a + u * (b - a);
    return Math.min(b, Math.max(a, tidy(v)));
  }
  throw new TypeError('from/to/steps ranges belong to the grid sampler');
}
